"""The bench description a user keeps beside their sweeps, and command-line overrides.

A small TOML file (``fitkit-setup.toml`` in the sweep's folder is found by itself)::

    [bench]
    arrangement = "divider"          # divider, across, impedance, reflection,
                                     # series-through, shunt-through
    source_resistance = "50"         # ohm, SI prefixes allowed: "4k7", "50 ohm"
    sense_resistor = "47 +- 0.5"     # divider: in series, the scope across it; a fixture
                                     # value may carry its standard uncertainty ("+- 1%")
    feed_resistor = "10k"            # across: feeds the circuit, the scope across it
    probe_capacitance = "15p"
    ratio_reference = "terminal"     # or "open-circuit" (source resistance in the loop)
    generator_amplitude = "2 Vpp"    # for absolute-volt sweeps; Vpp, Vrms or Vpk
    generator_display = "matched"    # display assumes a 50 ohm load; or "open-circuit"
    reference_impedance = "50"       # Z0 for S-parameters
    relative = false                 # true when the ratio's scale is not calibrated
    reading_gain = "1 +- 2%"         # the reading's calibration: 1, and how well it holds

    [known]                          # values measured otherwise (LCR meter)
    L = "100u +- 0.5u"

    [columns]                        # handed to the sweep reader as column overrides

    [files."scope-*.csv".bench]      # only for the files whose name matches the pattern
    sense_resistor = "100"           # (layered over [bench]; also .known, .columns)

Command-line values win over the file; the file wins over the defaults. A folder that
holds two instruments' files says under ``[files."PATTERN"]`` which setup goes with
which files; a file that two patterns match is refused.
"""

from __future__ import annotations

import fnmatch
import math
import os
import re
from pathlib import Path

from fitkit.errors import FitkitError, InputError, SetupError
from fitkit.readers.columns import parse_overrides
from fitkit.setups import BENCHES, DEFAULT_BENCH, DISPLAYS, REFERENCES, Setup
from fitkit.sweep import Sweep
from fitkit.tomlfile import read_toml, refuse_unknown_keys
from fitkit.units import parse_quantity

DEFAULT_NAME = "fitkit-setup.toml"

#: file key -> (Setup field, unit for parse_quantity or None for a word/flag)
_FIELDS = {
    "arrangement": ("bench", None),
    "source_resistance": ("source_ohm", "ohm"),
    "sense_resistor": ("sense_ohm", "ohm"),
    "feed_resistor": ("feed_ohm", "ohm"),
    "probe_capacitance": ("probe_f", "F"),
    "ratio_reference": ("reference", None),
    "generator_amplitude": ("amplitude_vrms", "amplitude"),
    "generator_display": ("display", None),
    "reference_impedance": ("z0_ohm", "ohm"),
    "relative": ("relative", None),
    "reading_gain": ("reading_gain", ""),
}
_KNOWN_UNITS = {"R": "ohm", "L": "H", "C": "F"}
_SECTIONS = ("bench", "known", "columns")
_CHOICES = {"bench": BENCHES, "reference": REFERENCES, "display": DISPLAYS}
_EXAMPLES = {
    "source_ohm": "50",
    "sense_ohm": "47 or 4k7",
    "feed_ohm": "10k",
    "probe_f": "15p",
    "amplitude_vrms": "'2 Vpp'",
    "z0_ohm": "50",
    "reading_gain": "1",
}
#: Setup fields that must be above zero; the others (source resistance, probe
#: capacitance) may be zero.
_POSITIVE = {"sense_ohm", "feed_ohm", "z0_ohm", "amplitude_vrms", "reading_gain"}
#: Setup field -> the command-line option that sets it, for messages.
OPTION_OF = {
    "bench": "--bench",
    "source_ohm": "--source-r",
    "sense_ohm": "--sense-r",
    "feed_ohm": "--feed-r",
    "probe_f": "--probe-c",
    "reference": "--ratio-ref",
    "amplitude_vrms": "--amplitude",
    "display": "--display",
    "z0_ohm": "--z0",
    "relative": "--relative",
    "reading_gain": "--reading-gain",
}


def find_bench_file(sweep_path: str | Path, given: str | Path | None) -> Path | None:
    """The setup file to use: the one given, else ``fitkit-setup.toml`` beside the sweep."""
    if given is not None:
        return Path(given)
    beside = Path(sweep_path).parent / DEFAULT_NAME
    return beside if beside.is_file() else None


def load_bench_file(path: str | Path, *, for_sweep: str | Path | None = None) -> dict:
    """Read a setup file into ``{"bench": {...}, "known": {...}, "columns": {...}}``.

    Parameters
    ----------
    path : str or Path
        The setup file.
    for_sweep : str or Path, optional
        The sweep the setup is for: a ``[files."PATTERN"]`` table whose pattern matches
        its file name is layered over the file's own tables.

    Raises
    ------
    InputError
        When the file is missing, is not TOML, holds keys fitkit does not know (the
        message suggests the nearest known key), or when two patterns match the sweep.
    """
    p = Path(path)
    data, patterns = _checked_tables(p)
    out = {k: dict(data.get(k, {})) for k in _SECTIONS}
    if for_sweep is None:
        return out
    name = Path(for_sweep).name
    matching = [pat for pat in patterns if fnmatch.fnmatchcase(name, pat)]
    if len(matching) > 1:
        raise InputError(
            f"the sweep {name!r} matches more than one [files] pattern: "
            + ", ".join(repr(m) for m in matching),
            remedy="make the patterns exclusive, so each file has one setup",
            path=p,
        )
    for pattern in matching:
        for section in _SECTIONS:
            out[section].update(patterns[pattern].get(section, {}))
    return out


#: setup files read and checked, by path and the file's identity, size and times: the
#: sweeps of a batch share one setup file, read once (a rewritten file is read again)
_CHECKED: dict = {}


def _checked_tables(p: Path) -> tuple[dict, dict]:
    """The setup file's own tables and its ``[files."PATTERN"]`` tables, checked; kept
    unchanged while the file is (the caller copies what it changes)."""
    try:
        st = os.stat(p)
        key = (os.path.abspath(p), st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns, st.st_ctime_ns)
    except OSError:
        key = None  # reading it says why it cannot be read
    if key is not None and key in _CHECKED:
        return _CHECKED[key]
    data = read_toml(
        p,
        what="setup file",
        option="--setup",
        layout=f"see the layout of {DEFAULT_NAME} in docs/getting-started.md",
    )
    patterns = data.pop("files", {})
    _check_tables(data, p, "")
    if not isinstance(patterns, dict):
        raise _not_a_table("files", patterns, p)
    for pattern, tables in patterns.items():
        if not isinstance(tables, dict):
            raise _not_a_table(f'files."{pattern}"', tables, p)
        _check_tables(tables, p, f'files."{pattern}".')
    if key is not None:
        if len(_CHECKED) >= 64:
            _CHECKED.clear()
        _CHECKED[key] = data, patterns
    return data, patterns


def _check_tables(data: dict, path: Path, prefix: str) -> None:
    """Every section a table of known keys; a misspelt key gets the nearest known one."""
    allowed = {"bench": list(_FIELDS), "known": list(_KNOWN_UNITS), "columns": None}
    if prefix:  # a [files."PATTERN"] table: the sections only
        refuse_unknown_keys(f"[{prefix[:-1]}]", data, list(allowed), path)
    else:
        refuse_unknown_keys("the setup file", data, [*allowed, "files"], path)
    for section, table in data.items():
        if not isinstance(table, dict):
            raise _not_a_table(prefix + section, table, path)
        if allowed[section] is not None:
            refuse_unknown_keys(f"[{prefix}{section}]", table, allowed[section], path)
    _check_values(data, path, prefix)


def _check_values(data: dict, path: Path, prefix: str) -> None:
    """Each value readable and in range, so a mistake is named with the setup file."""
    parse_overrides(data.get("columns"), path)
    try:
        for key, raw in data.get("bench", {}).items():
            where = f"[{prefix}bench] {key}"
            name, unit = _FIELDS[key]
            value, _ = _convert(name, unit, raw, what=where)
            if name in _CHOICES and value not in _CHOICES[name]:
                raise SetupError(
                    f"{where} = {raw!r} is not one of the choices",
                    remedy=f"choose one of: {', '.join(_CHOICES[name])}",
                )
        for name, raw in data.get("known", {}).items():
            _known_value(name, raw)
    except FitkitError as exc:
        raise InputError(exc.message, remedy=exc.remedy, path=path) from None


def _not_a_table(name: str, value, path: Path) -> InputError:
    return InputError(
        f"[{name}] must be a table of settings, not {value!r}",
        remedy=f"write it as a section, e.g. [{name}] on its own line with key = value "
        "lines under it (see docs/getting-started.md)",
        path=path,
    )


def parse_amplitude(text: str | float) -> float:
    """A generator amplitude as set on its display, in volts RMS (a sine is assumed).

    Examples
    --------
    >>> round(parse_amplitude("2 Vpp"), 6)
    0.707107
    """
    s = str(text).strip().replace(" ", "")
    m = re.fullmatch(r"(.*?)(vpp|vrms|vpk|vp)", s, flags=re.IGNORECASE)
    if not m:
        raise SetupError(
            f"the generator amplitude {text!r} does not say Vpp, Vrms or Vpk",
            remedy="write e.g. '2 Vpp' or '0.707 Vrms'",
        )
    volts = parse_quantity(m.group(1), "", what="generator amplitude")
    form = m.group(2).lower()
    if form == "vpp":
        return volts / (2.0 * math.sqrt(2.0))
    if form in ("vpk", "vp"):
        return volts / math.sqrt(2.0)
    return volts


def parse_known(text: str) -> tuple:
    """``"L=100u"`` or ``"L=100u+-0.5u"`` -> ``("L", (1e-4, 5e-7))``."""
    name, sep, rest = str(text).partition("=")
    name = name.strip()
    if not sep or name not in _KNOWN_UNITS:
        raise SetupError(
            f"cannot read the known value {text!r}",
            remedy="write NAME=VALUE with NAME one of R, L, C, e.g. L=100u or L=100u+-0.5u",
        )
    return name, _known_value(name, rest)


def _known_value(name: str, text: str) -> tuple:
    unit = _KNOWN_UNITS[name]
    value, _, err = str(text).replace("\u00b1", "+-").partition("+-")
    v = parse_quantity(value, unit, what=f"known {name}")
    e = parse_quantity(err, unit, what=f"uncertainty of {name}") if err.strip() else 0.0
    if not v > 0 or e < 0:
        raise SetupError(
            f"the known value {name}={text} is not a positive value with a non-negative "
            "uncertainty",
            remedy=f"write e.g. {name}=100{'u' if unit == 'H' else 'n' if unit == 'F' else ''}"
            f"+-0.5{'u' if unit == 'H' else 'n' if unit == 'F' else ''} (--known or [known])",
        )
    return v, e


def build_setup(sweep: Sweep, file_values: dict | None, overrides: dict) -> Setup:
    """The Setup for this sweep: defaults, then the setup file, then the command line.

    ``overrides`` holds Setup field names (``sense_ohm``, ``bench``, ...) with raw text
    or values; ``None`` means "not given".
    """
    fields: dict = {}
    uncertainty: dict = {}
    for key, raw in (file_values or {}).items():
        name, unit = _FIELDS[key]
        fields[name], uncertainty[name] = _convert(name, unit, raw, what=f"{key} (setup file)")
    given = {name: raw for name, raw in overrides.items() if raw is not None}
    for name, raw in given.items():
        fields[name], uncertainty[name] = check_override(name, raw)
    fields["uncertainty"] = tuple((name, u) for name, u in uncertainty.items() if u)
    fields.setdefault("bench", DEFAULT_BENCH[sweep.kind])
    _refuse_unused(given, fields["bench"], sweep)
    if sweep.kind in ("s11", "s21") and "z0_ohm" not in fields:
        ref = sweep.metadata.get("reference_ohm")
        if ref is not None:
            fields["z0_ohm"] = float(ref)  # the Touchstone option line states it
    try:
        return Setup(kind=sweep.kind, **fields)
    except SetupError as exc:
        if exc.path is None:  # the message is about this sweep's bench: say which sweep
            raise SetupError(exc.message, remedy=exc.remedy, path=sweep.source) from None
        raise


def _refuse_unused(given: dict, bench: str, sweep: Sweep) -> None:
    """An option that this bench or this sweep does not use is refused, not ignored."""
    if "feed_ohm" in given and bench != "across":
        raise SetupError(
            f"--feed-r is for an across bench; this sweep is read as a {bench} bench",
            remedy="drop --feed-r, or say --bench across if the scope read the voltage "
            "across the circuit",
            path=sweep.source,
        )
    if "amplitude_vrms" in given and sweep.kind != "volts":
        raise SetupError(
            f"--amplitude is for sweeps in volts; this sweep is a {sweep.kind}, whose scale "
            "does not depend on the generator's level",
            remedy="drop --amplitude, or say --measures volts if the values are volts",
            path=sweep.source,
        )


def check_override(name: str, raw) -> tuple:
    """A command-line bench value in SI and its standard uncertainty (0 when none is
    given), checked as the setup file's are.

    Parameters
    ----------
    name : str
        The Setup field (``sense_ohm``, ``amplitude_vrms``, ...).
    raw : str or number
        The value as typed; a fixture value may carry its standard uncertainty,
        ``"47+-0.5"``, ``"47 +- 1%"`` (``±`` works too).

    Raises
    ------
    SetupError
        Naming the option and the fix, when the value cannot be read or is out of range.
    """
    unit = next((u for n, u in _FIELDS.values() if n == name), None)
    return _convert(name, unit, raw, what=OPTION_OF.get(name, name))


def known_values(file_known: dict | None, cli_known: tuple) -> dict:
    """Known component values from the setup file and ``--known`` (command line wins).

    Raises
    ------
    SetupError
        When a value cannot be read, or ``--known`` names one value twice.
    """
    out = {name: _known_value(name, raw) for name, raw in (file_known or {}).items()}
    typed = [parse_known(text) for text in cli_known]
    names = [name for name, _ in typed]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise SetupError(
            f"--known gives {', '.join(twice)} more than once",
            remedy="give each of R, L, C once (with its uncertainty, e.g. L=220u+-1u)",
        )
    out.update(typed)
    return out


def _convert(name: str, unit: str | None, raw, *, what: str) -> tuple:
    """(the value in SI, its standard uncertainty or 0)."""
    if unit is None:
        if name == "relative" and not isinstance(raw, bool):
            raise SetupError(
                f"{what} must be true or false, not {raw!r}", remedy="write relative = true"
            )
        return (raw if name == "relative" else str(raw)), 0.0
    text, sep, u_text = str(raw).replace("\u00b1", "+-").partition("+-")
    if sep and not text.strip():
        raise SetupError(
            f"{what} = {raw!r} gives no value before '+-'",
            remedy=f"write the value, then its uncertainty, e.g. {_EXAMPLES[name].split(' or ')[0]}"
            "+-1%",
        )
    value = _parse(text, unit, what)
    low = "above 0" if name in _POSITIVE else "0 or more"
    if not math.isfinite(value) or (value <= 0 if name in _POSITIVE else value < 0):
        raise SetupError(
            f"{what} = {raw!r} must be a finite value {low}",
            remedy=f"give the value as measured, e.g. {_EXAMPLES[name]}",
        )
    if not sep:
        return value, 0.0
    share = u_text.strip().endswith("%")
    try:
        u = (
            value * parse_quantity(u_text.strip()[:-1], "", what=what) / 100.0
            if share
            else _parse(u_text, unit, what)
        )
    except SetupError:
        u = math.nan
    if not (math.isfinite(u) and u >= 0):
        raise SetupError(
            f"{what} = {raw!r}: cannot read the standard uncertainty after '+-'",
            remedy=f"write it in the value's unit or in %, e.g. {_EXAMPLES[name].split(' or ')[0]}"
            f"+-1%",
        )
    return value, u


def _parse(text: str, unit: str, what: str) -> float:
    return parse_amplitude(text) if unit == "amplitude" else parse_quantity(text, unit, what=what)
