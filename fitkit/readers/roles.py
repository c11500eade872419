"""From a described header to a reading plan: which column gives each role, in what unit,
and what the sweep measured; then the numbers of those columns to SI values.

A per-point uncertainty column (role ``sigma``: header words sigma, std, stdev, stddev,
sd, uncertainty) is read in its own unit: ``%`` or dB make it relative to the reading;
a unit of the measured values' dimension (V, mV, ohm, ratio...) or none at all makes it
absolute, in the measured values' unit when it states none (a dB reading's sigma
without a unit is then in dB, so relative).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from fitkit.errors import InputError
from fitkit.readers.columns import Column, Override, find_column, guess_role
from fitkit.readers.units import Unit, lookup_unit

_MEASURED = ("mag", "phase", "real", "imag")
#: Words naming the generator's side of the bench: a level column there (a scope's
#: channel 1 on the generator, "CH1 Amplitude") is the drive, not the response.
_DRIVE_WORDS = {"ch1", "ch01", "in", "input", "vin", "generator", "gen", "source", "drive"}
_ROLE_WORDS = {
    "freq": "frequency",
    "mag": "magnitude",
    "phase": "phase",
    "real": "real part",
    "imag": "imaginary part",
    "sigma": "per-point standard deviation",
}
_NEPERS_PER_DB = math.log(10.0) / 20.0


@dataclass
class Plan:
    """Which column gives each role and in what unit; what the sweep measured.

    Attributes
    ----------
    roles : dict
        Role name to ``(Column, Unit)``; holds ``freq`` and either ``mag`` (with an
        optional ``phase``) or both ``real`` and ``imag``; ``sigma`` when the table
        gives each point's standard deviation.
    kind : str
        One of :data:`fitkit.sweep.KINDS`.
    in_db : bool
        The magnitude is written in dB.
    notes : list of str
        Choices made that the user should see.
    """

    roles: dict
    kind: str
    in_db: bool
    notes: list = field(default_factory=list)

    def values(self, cells: dict[str, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
        """Frequencies in Hz and measured values in SI from the columns' numbers.

        Each step writes into its own new array (``out=``), so a million-row sweep
        makes no temporary copies beyond the result.
        """
        freq = np.multiply(cells["freq"], self.roles["freq"][1].scale)
        if "real" in self.roles:
            scale = self.roles["real"][1].scale
            out = np.empty(freq.size, dtype=np.complex128)
            np.multiply(cells["real"], scale, out=out.real)
            np.multiply(cells["imag"], scale, out=out.imag)
            return freq, out
        unit = self.roles["mag"][1]
        if unit.in_db:
            mag = np.multiply(cells["mag"], np.log(10.0) / 20.0)
            with np.errstate(over="ignore"):  # an absurd dB value becomes inf, refused later
                np.exp(mag, out=mag)
            mag *= unit.scale
        else:
            mag = np.multiply(cells["mag"], unit.scale)
        if "phase" not in self.roles:
            return freq, mag
        out = np.empty(freq.size, dtype=np.complex128)
        phase = np.multiply(cells["phase"], self.roles["phase"][1].scale, out=out.real)
        np.sin(phase, out=out.imag)
        np.cos(phase, out=out.real)
        out.real *= mag
        out.imag *= mag
        return freq, out

    def sigma(self, cells: dict[str, np.ndarray]) -> tuple:
        """Each point's standard deviation and whether it is relative to the reading
        (see :class:`fitkit.sweep.Sweep`); ``(None, False)`` without a sigma column."""
        if "sigma" not in self.roles:
            return None, False
        unit = self.roles["sigma"][1]
        if unit.in_db:
            return cells["sigma"] * _NEPERS_PER_DB, True
        return cells["sigma"] * unit.scale, unit.dimension == "share"


#: plans made, by header, overrides and kind asked: the files of a batch repeat their
#: header (a header that fails is not kept: its error names the file)
_PLANS: dict = {}


def plan_columns(
    header: list[Column],
    overrides: dict[str, Override],
    kind_asked: str | None,
    path: Path,
    line: int | None,
) -> Plan:
    """Give each role a column and a unit, from the user's overrides then the header.

    Raises
    ------
    InputError
        When no column reads as frequency or as a measured value, when two columns
        compete for one role, or when units do not fit their roles.
    """
    key = (tuple(header), tuple(overrides.items()), kind_asked)
    plan = _PLANS.get(key)
    if plan is None:
        plan = _plan(header, overrides, kind_asked, path, line)
        if len(_PLANS) >= 256:
            _PLANS.clear()
        _PLANS[key] = plan
    return Plan(roles=dict(plan.roles), kind=plan.kind, in_db=plan.in_db, notes=list(plan.notes))


def _plan(header, overrides, kind_asked, path: Path, line) -> Plan:
    notes: list[str] = []
    chosen: dict[str, Column] = {}
    for role, ov in overrides.items():
        if ov.column is not None:
            chosen[role] = find_column(ov.column, header, path, line)
    free = [c for c in header if c not in chosen.values()]
    if "freq" not in chosen:
        chosen["freq"] = _pick_freq(free, header, path, line)
        free.remove(chosen["freq"])
    _pick_measured(chosen, free, kind_asked, notes, path, line)
    if "sigma" not in chosen:
        found = [c for c in free if guess_role(c) == "sigma" and c not in chosen.values()]
        if len(found) > 1:
            _competing("sigma", found, path, line)
        if found:
            chosen["sigma"] = found[0]
    roles = {}
    for role, col in chosen.items():
        ov = overrides.get(role)
        unit = ov.unit if ov is not None and ov.unit is not None else col.unit
        if role != "sigma":
            roles[role] = (col, _unit_for(role, col, unit, notes, path, line))
    kind, in_db = _kind(roles, chosen, kind_asked, notes, path, line)
    if "sigma" in chosen:
        roles["sigma"] = _sigma_unit(chosen["sigma"], overrides.get("sigma"), roles, notes, path)
    unused = [c.name for c in header if c not in chosen.values() and c.name]
    if unused:
        notes.append(f"ignored column(s) {', '.join(repr(n) for n in unused)}")
    return Plan(roles=roles, kind=kind, in_db=in_db, notes=notes)


def _pick_freq(free: list[Column], header: list[Column], path: Path, line) -> Column:
    found = [c for c in free if guess_role(c) == "freq"]
    if len(found) > 1:
        stated = [c for c in found if c.unit is not None and c.unit.dimension == "freq"]
        found = stated if stated else found
    if not found:
        names = ", ".join(repr(c.name) for c in header)
        raise InputError(
            f"no column reads as frequency (columns: {names})",
            remedy="name the frequency column and its unit, e.g. --column freq=1:kHz",
            path=path,
            line=line,
        )
    if len(found) > 1:
        _competing("freq", found, path, line)
    return found[0]


def _pick_measured(chosen, free, kind_asked, notes, path, line) -> None:
    given = [chosen[r] for r in _MEASURED if r in chosen]
    candidates = [c for c in free if guess_role(c) in _MEASURED]
    tags = {c.tag for c in given if c.tag} or {c.tag for c in candidates if c.tag}
    tags &= {"s11", "s21", "impedance"}
    if kind_asked in tags:
        tag = kind_asked
    elif len(tags) <= 1:
        tag = next(iter(tags), None)
    elif tags == {"s11", "s21"}:
        tag = "s21"
        notes.append("the table holds S11 and S21; read S21 (ask for kind s11 to read S11)")
    else:
        names = ", ".join(repr(c.name) for c in candidates)
        raise InputError(
            f"the table holds more than one measured quantity ({names})",
            remedy="say which to read, e.g. --column mag=NAME or the kind s11/s21",
            path=path,
            line=line,
        )
    candidates = [c for c in candidates if c.tag in (tag, None)]
    by_role: dict[str, list[Column]] = {}
    for c in candidates:
        by_role.setdefault(guess_role(c), []).append(c)
    user_parts = {r for r in ("mag", "real", "imag") if r in chosen}
    if user_parts:
        wanted = ("phase",) if "mag" in user_parts else ("real", "imag")
    elif "real" in by_role and "imag" in by_role:
        wanted = ("real", "imag")
        if "mag" in by_role:
            notes.append("read the real and imaginary parts (the magnitude columns also given)")
    elif ("real" in by_role or "imag" in by_role) and "mag" not in by_role:
        wanted = ("real", "imag")  # one part alone: refused below, naming the other
    else:
        wanted = ("mag", "phase")
    for role in wanted:
        if role in chosen or role not in by_role:
            continue
        if len(by_role[role]) > 1 and role == "mag":
            by_role[role] = _response_columns(by_role[role], notes)
        if len(by_role[role]) > 1:
            _competing(role, by_role[role], path, line)
        chosen[role] = by_role[role][0]
    if "mag" in chosen and ("real" in chosen or "imag" in chosen):
        raise InputError(
            "both a magnitude and real/imaginary columns were named",
            remedy="name either mag (and phase) or real and imag",
            path=path,
            line=line,
        )
    if ("real" in chosen) != ("imag" in chosen):
        have, lack = ("real", "imag") if "real" in chosen else ("imag", "real")
        raise InputError(
            f"column {chosen[have].name!r} is a {_ROLE_WORDS[have]} but no column "
            f"is the {_ROLE_WORDS[lack]}",
            remedy=f"name the {_ROLE_WORDS[lack]} column, e.g. --column {lack}=NAME",
            path=path,
            line=line,
        )
    if "mag" not in chosen and "real" not in chosen:
        raise InputError(
            "no column reads as a measured value (magnitude, dB, volts, |Z| or real/imag)",
            remedy="name it and its unit, e.g. --column mag=2:dB",
            path=path,
            line=line,
        )


def _response_columns(cols: list[Column], notes: list) -> list[Column]:
    """Of several magnitude columns, the one ratio (dB or linear) beside levels in volts:
    a scope's export gives the gain with the channels' levels (``CH1 Amplitude``, the
    generator's drive). Two volt columns (Vin, Vout) stay competing: the user decides."""
    ratios = [c for c in cols if c.unit is not None and c.unit.dimension == "level"]
    volts = [c for c in cols if c.unit is not None and c.unit.dimension == "volt"]
    if len(ratios) != 1 or len(ratios) + len(volts) != len(cols):
        return cols
    for col in volts:
        drive = bool(col.words & _DRIVE_WORDS) or {"channel", "1"} <= col.words
        what = "the generator's level" if drive else "a level, not the ratio"
        notes.append(f"column {col.name!r} read as {what}; the magnitude is {ratios[0].name!r}")
    return ratios


def _competing(role: str, cols: list[Column], path: Path, line) -> None:
    names = " and ".join(repr(c.name) for c in cols)
    raise InputError(
        f"columns {names} both read as the {_ROLE_WORDS[role]}",
        remedy=f"name the one to use, e.g. --column {role}={cols[0].position}",
        path=path,
        line=line,
    )


def _unit_for(role: str, col: Column, unit: Unit | None, notes, path, line) -> Unit:
    allowed = {
        "freq": ("freq",),
        "phase": ("phase",),
        "mag": ("level", "volt", "ohm"),
        "real": ("level", "volt", "ohm"),
        "imag": ("level", "volt", "ohm"),
    }[role]
    if unit is None:
        default = {"freq": "Hz", "phase": "deg"}.get(role, "ratio")
        if col.tag == "impedance" and role != "phase":
            default = "ohm"
        notes.append(f"column {col.name!r} states no unit; read it in {default}")
        return lookup_unit(default)
    if unit.dimension not in allowed:
        raise InputError(
            f"column {col.name!r} is in {unit.text}, which is not a unit for the "
            f"{_ROLE_WORDS[role]}",
            remedy=f"give the {role} column its own unit, e.g. --column {role}=NAME:UNIT",
            path=path,
            line=line,
            column=col.position,
        )
    if unit.in_db and role in ("real", "imag"):
        raise InputError(
            f"column {col.name!r} is a {_ROLE_WORDS[role]} in dB",
            remedy="real and imaginary parts are linear; check the header's unit",
            path=path,
            line=line,
            column=col.position,
        )
    return unit


def _sigma_unit(col: Column, ov: Override | None, roles: dict, notes, path) -> tuple:
    """The sigma column's unit: its own, else the measured values' (see the module notes)."""
    measured = roles["mag" if "mag" in roles else "real"][1]
    unit = ov.unit if ov is not None and ov.unit is not None else col.unit
    if unit is None:
        unit = measured
        how = "relative" if unit.in_db else "absolute"
        notes.append(
            f"column {col.name!r} states no unit; read it as each point's standard "
            f"deviation in {unit.text} ({how}), the measured values' unit"
        )
    if not (unit.in_db or unit.dimension in ("share", measured.dimension)):
        raise InputError(
            f"column {col.name!r} is in {unit.text}, which does not fit readings in "
            f"{measured.text}",
            remedy="give each point's standard deviation in the readings' unit, in % or "
            "in dB (of the reading), e.g. --column sigma=NAME:%",
            path=path,
            column=col.name or col.position,
        )
    return col, unit


def _kind(roles, chosen, kind_asked, notes, path, line) -> tuple[str, bool]:
    parts = [r for r in ("mag", "real", "imag") if r in roles]
    dims = {roles[r][1].dimension for r in parts}
    if len(dims) > 1 or ("real" in roles and roles["real"][1] != roles["imag"][1]):
        raise InputError(
            "the real and imaginary parts are in different units",
            remedy="check the header's units, or name them, e.g. --column imag=NAME:ohm",
            path=path,
            line=line,
        )
    dim = dims.pop()
    tags = {chosen[r].tag for r in parts} - {None}
    kind = {"volt": "volts", "ohm": "impedance"}.get(dim) or next(iter(tags & {"s11", "s21"}), None)
    if kind is None:
        kind = "impedance" if "impedance" in tags else "ratio"
    if kind_asked and kind_asked != kind:
        if dim in ("volt", "ohm"):
            raise InputError(
                f"the values are in {roles[parts[0]][1].text} but the kind asked is {kind_asked}",
                remedy="drop the kind setting or correct the column's unit",
                path=path,
                line=line,
            )
        notes.append(f"read the values as {kind_asked}, as asked (the header suggests {kind})")
        kind = kind_asked
    return kind, bool(roles[parts[0]][1].in_db) and "mag" in roles
