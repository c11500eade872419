"""The names of the values fitkit reports, their units and labels: one set for the spec
keys, the JSON and CSV files, the plan targets, the drift diagnosis and the plots
(docs/names.md lists them).

Names carry no unit; the unit is in :data:`QUANTITIES`, written beside each value in JSON
(``"unit"``). A standard uncertainty is ``u`` everywhere: ``"u"`` in JSON, ``<name>_u``
in CSV, ``change_u`` in a drift diagnosis.

Earlier versions spelled some names otherwise (``f0_hz`` in JSON and CSV, ``QL`` as a plan
target, ``stderr`` for the uncertainty); :data:`OLD_NAMES` maps them to today's, so
files written then still load, and old spellings typed by a user still work with a note.
"""

from __future__ import annotations

import warnings

#: name -> (unit, label) for everything a fit reports
QUANTITIES = {
    "R": ("ohm", "R (circuit loss)"),
    "L": ("H", "L"),
    "C": ("F", "C"),
    "f0": ("Hz", "f0 (resonance)"),
    "Q": ("", "Q (circuit, unloaded)"),
    "Q_loaded": ("", "Q (loaded, as the bench saw it)"),
    "bandwidth": ("Hz", "bandwidth -3 dB (circuit)"),
    "loaded_bandwidth": ("Hz", "bandwidth -3 dB (loaded)"),
    "R_dynamic": ("ohm", "dynamic resistance (tank at f0)"),
    "C_self": ("F", "C self (coil self-capacitance)"),
    "f_self": ("Hz", "f self (coil self-resonance)"),
    "R_dc": ("ohm", "R dc (loss as f -> 0)"),
    "k_skin": ("ohm/sqrt(Hz)", "k (loss growth, R_dc + k sqrt(f))"),
    "R_self": ("ohm", "R at the coil's self-resonance"),
    "delay": ("s", "delay (bench: phase slope)"),
    "tilt": ("dB/decade", "tilt (bench: generator level)"),
    "floor": ("dB", "reading floor (bench, re peak)"),
}
#: quantities only some topologies or benches have
OPTIONAL = ("R_dynamic", "C_self", "f_self", "R_dc", "k_skin", "R_self", "delay", "tilt", "floor")
COMPONENTS = ("R", "L", "C")

#: names in files written before format 2 (a unit in the name) -> today's names
OLD_SAVED_NAMES = {
    "f0_hz": "f0",
    "bandwidth_hz": "bandwidth",
    "loaded_bandwidth_hz": "loaded_bandwidth",
    "f_self_hz": "f_self",
    "delay_s": "delay",
    "tilt_db_per_decade": "tilt",
    "floor_db": "floor",
    "q_loaded": "Q_loaded",  # a saved prediction's
}
#: every old spelling a user may still type (spec keys, plan targets) -> today's name
OLD_NAMES = {
    **OLD_SAVED_NAMES,
    "QL": "Q_loaded",
    "B": "bandwidth",
    "BL": "loaded_bandwidth",
    "RD": "R_dynamic",
    "Cself": "C_self",
    "fself": "f_self",
}
#: the layout of a saved fit: 2 has today's names and ``u``; 1 (no ``format`` key) the old
FIT_FORMAT = 2


class OldNameWarning(FutureWarning):
    """A value named the way an earlier version named it; it still works."""


def current_name(name: str, where: str) -> str:
    """Today's name of ``name``, with a one-line :class:`OldNameWarning` for an old spelling.

    Parameters
    ----------
    name : str
        The name as written.
    where : str
        Where it was written (``"spec.toml, line 3"``, ``"--target"``), for the note.

    Examples
    --------
    >>> current_name("L", "--target")
    'L'
    """
    new = OLD_NAMES.get(name)
    if new is None:
        return name
    warnings.warn(
        f"{where}: {name!r} is the old name of {new!r}; write {new!r} (the old name "
        "still works for now)",
        OldNameWarning,
        stacklevel=2,
    )
    return new


def renamed_key(key: str) -> str:
    """A key of a saved file in today's names, quietly: ``f0_hz_u`` -> ``f0_u``.

    Examples
    --------
    >>> renamed_key("f0_hz_u"), renamed_key("loaded_bandwidth_hz"), renamed_key("L_u")
    ('f0_u', 'loaded_bandwidth', 'L_u')
    """
    stem, suffix = (key[:-2], "_u") if key.endswith("_u") else (key, "")
    return OLD_SAVED_NAMES[stem] + suffix if stem in OLD_SAVED_NAMES else key


def upgrade_entries(data):
    """Saved JSON (a fit, a prediction, a drift diagnosis) with today's names as keys and
    ``u`` for the old ``stderr``, all the way down; today's JSON passes unchanged."""
    if isinstance(data, list):
        return [upgrade_entries(x) for x in data]
    if not isinstance(data, dict):
        return data
    out = {}
    for key, value in data.items():
        if key == "stderr":
            out.setdefault("u", value)
        else:
            out[renamed_key(key)] = upgrade_entries(value)
    return out


def upgrade_fit(data: dict) -> dict:
    """A saved fit (``fitkit fit --json``) in today's layout (:data:`FIT_FORMAT`); one
    written before (no ``format`` key) is translated, a new dict returned."""
    if not isinstance(data, dict) or data.get("format", 1) >= FIT_FORMAT:
        return data
    out = dict(data, format=FIT_FORMAT)
    for part in ("values", "derived", "known"):  # the setup and the file's facts keep theirs
        out[part] = upgrade_entries(data.get(part, {}))
    for part in ("correlations", "covariance"):
        if isinstance(out.get(part), dict) and isinstance(out[part].get("names"), list):
            out[part] = dict(out[part], names=[renamed_key(n) for n in out[part]["names"]])
    if isinstance(out.get("undetermined"), list):
        out["undetermined"] = [
            dict(u, name=renamed_key(u["name"])) if isinstance(u, dict) and "name" in u else u
            for u in out["undetermined"]
        ]
    if isinstance(out.get("fit"), dict) and "redchi" in out["fit"]:
        out["fit"] = dict(out["fit"])
        out["fit"]["reduced_chi_square"] = out["fit"].pop("redchi")
    return out
