"""The bench description a user keeps beside their sweeps, and command-line overrides.

A small TOML file (``fitkit-setup.toml`` in the sweep's folder is found by itself)::

    [bench]
    arrangement = "divider"          # divider, across, impedance, reflection,
                                     # series-through, shunt-through
    source_resistance = "50"         # ohm, SI prefixes allowed: "4k7", "50 ohm"
    sense_resistor = "47"            # divider: in series, the scope across it
    feed_resistor = "10k"            # across: feeds the circuit, the scope across it
    probe_capacitance = "15p"
    ratio_reference = "terminal"     # or "open-circuit" (source resistance in the loop)
    generator_amplitude = "2 Vpp"    # for absolute-volt sweeps; Vpp, Vrms or Vpk
    generator_display = "matched"    # display assumes a 50 ohm load; or "open-circuit"
    reference_impedance = "50"       # Z0 for S-parameters
    relative = false                 # true when the ratio's scale is not calibrated

    [known]                          # values measured otherwise (LCR meter)
    L = "100u +- 0.5u"

    [columns]                        # handed to the sweep reader as column overrides

Command-line values win over the file; the file wins over the defaults.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

from fitkit.errors import InputError, SetupError
from fitkit.setups import DEFAULT_BENCH, Setup
from fitkit.sweep import Sweep
from fitkit.tomlfile import read_toml
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
}
_KNOWN_UNITS = {"R": "ohm", "L": "H", "C": "F"}


def find_bench_file(sweep_path: str | Path, given: str | Path | None) -> Path | None:
    """The setup file to use: the one given, else ``fitkit-setup.toml`` beside the sweep."""
    if given is not None:
        return Path(given)
    beside = Path(sweep_path).parent / DEFAULT_NAME
    return beside if beside.is_file() else None


def load_bench_file(path: str | Path) -> dict:
    """Read a setup file into ``{"bench": {...}, "known": {...}, "columns": {...}}``.

    Raises
    ------
    InputError
        When the file is missing, is not TOML, or holds keys fitkit does not know.
    """
    p = Path(path)
    data = read_toml(
        p,
        what="setup file",
        option="--setup",
        layout=f"see the layout of {DEFAULT_NAME} in docs/getting-started.md",
    )
    unknown = set(data) - {"bench", "known", "columns"}
    unknown |= set(data.get("bench", {})) - set(_FIELDS)
    unknown |= set(data.get("known", {})) - set(_KNOWN_UNITS)
    if unknown:
        raise InputError(
            f"unknown setting(s): {', '.join(sorted(unknown))}",
            remedy="sections are [bench], [known], [columns]; bench keys: " + ", ".join(_FIELDS),
            path=p,
        )
    return {k: dict(data.get(k, {})) for k in ("bench", "known", "columns")}


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
    return v, e


def build_setup(sweep: Sweep, file_values: dict | None, overrides: dict) -> Setup:
    """The Setup for this sweep: defaults, then the setup file, then the command line.

    ``overrides`` holds Setup field names (``sense_ohm``, ``bench``, ...) with raw text
    or values; ``None`` means "not given".
    """
    fields: dict = {}
    for key, raw in (file_values or {}).items():
        name, unit = _FIELDS[key]
        fields[name] = _convert(name, unit, raw)
    for name, raw in overrides.items():
        if raw is None:
            continue
        unit = next((u for n, u in _FIELDS.values() if n == name), None)
        fields[name] = _convert(name, unit, raw)
    fields.setdefault("bench", DEFAULT_BENCH[sweep.kind])
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


def known_values(file_known: dict | None, cli_known: tuple) -> dict:
    """Known component values from the setup file and ``--known`` (command line wins)."""
    out = {name: _known_value(name, raw) for name, raw in (file_known or {}).items()}
    out.update(parse_known(text) for text in cli_known)
    return out


def _convert(name: str, unit: str | None, raw):
    if unit == "amplitude":
        return parse_amplitude(raw)
    if unit is not None:
        return parse_quantity(raw, unit, what=name.replace("_", " "))
    if name == "relative":
        if not isinstance(raw, bool):
            raise SetupError(f"'relative' must be true or false, not {raw!r}")
        return raw
    return str(raw)
