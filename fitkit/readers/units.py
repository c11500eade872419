"""Units a sweep column may be written in, and what each means in SI.

Every unit belongs to one dimension: frequency (to Hz), phase (to rad), a dimensionless
level (linear or dB), volts (to V RMS, linear or dBV), ohm, or a share of the reading
(``%``, for a per-point uncertainty column). Lookup is exact first, then
case-insensitive for spellings that cannot be confused (``MHz`` vs ``mHz`` is read as MHz:
no tuned circuit is swept in millihertz).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

_RMS_PER_PP = 1.0 / (2.0 * math.sqrt(2.0))
_RMS_PER_PEAK = 1.0 / math.sqrt(2.0)


@dataclass(frozen=True)
class Unit:
    """One column unit.

    Attributes
    ----------
    text : str
        The spelling shown to the user.
    dimension : str
        ``"freq"``, ``"phase"``, ``"level"`` (dimensionless), ``"volt"``, ``"ohm"`` or
        ``"share"`` (a fraction of the reading).
    scale : float
        Multiplies a linear value into SI (Hz, rad, V RMS, ohm); for dB units it scales
        the linear value after ``10 ** (x / 20)``.
    in_db : bool
        The column holds 20 log10 of the quantity.
    """

    text: str
    dimension: str
    scale: float = 1.0
    in_db: bool = False


def _table() -> dict[str, Unit]:
    units = [
        Unit("Hz", "freq", 1.0),
        Unit("kHz", "freq", 1e3),
        Unit("MHz", "freq", 1e6),
        Unit("GHz", "freq", 1e9),
        Unit("rad/s", "freq", 1.0 / (2.0 * math.pi)),
        Unit("krad/s", "freq", 1e3 / (2.0 * math.pi)),
        Unit("Mrad/s", "freq", 1e6 / (2.0 * math.pi)),
        Unit("deg", "phase", math.pi / 180.0),
        Unit("rad", "phase", 1.0),
        Unit("ratio", "level"),
        Unit("dB", "level", in_db=True),
        Unit("V", "volt"),
        Unit("Vrms", "volt"),
        Unit("mV", "volt", 1e-3),
        Unit("mVrms", "volt", 1e-3),
        Unit("uV", "volt", 1e-6),
        Unit("Vpp", "volt", _RMS_PER_PP),
        Unit("mVpp", "volt", 1e-3 * _RMS_PER_PP),
        Unit("Vpk", "volt", _RMS_PER_PEAK),
        Unit("mVpk", "volt", 1e-3 * _RMS_PER_PEAK),
        Unit("dBV", "volt", in_db=True),
        Unit("ohm", "ohm"),
        Unit("kohm", "ohm", 1e3),
        Unit("Mohm", "ohm", 1e6),
        Unit("mohm", "ohm", 1e-3),
        Unit("%", "share", 1e-2),
    ]
    table = {u.text: u for u in units}
    aliases = {
        "Hertz": "Hz",
        "rad/sec": "rad/s",
        "degree": "deg",
        "degrees": "deg",
        "\u00b0": "deg",
        "radian": "rad",
        "radians": "rad",
        "V/V": "ratio",
        "lin": "ratio",
        "linear": "ratio",
        "Vp-p": "Vpp",
        "mVp-p": "mVpp",
        "Vp": "Vpk",
        "Vpeak": "Vpk",
        "\u00b5V": "uV",
        "ohms": "ohm",
        "\u03a9": "ohm",
        "\u2126": "ohm",
        "k\u03a9": "kohm",
        "k\u2126": "kohm",
        "M\u03a9": "Mohm",
        "M\u2126": "Mohm",
    }
    table.update({alias: table[name] for alias, name in aliases.items()})
    return table


UNITS = _table()
# Case-insensitive spellings, leaving out those where case changes the meaning.
_FOLDED = {
    key.lower(): unit for key, unit in UNITS.items() if key.lower() not in ("mohm", "mrad/s")
}


def lookup_unit(text: str) -> Unit | None:
    """The unit spelled ``text`` (spaces ignored), or None when it is not a known unit.

    Examples
    --------
    >>> lookup_unit("kHz").scale
    1000.0
    >>> lookup_unit("V pp").dimension
    'volt'
    """
    key = text.strip().replace(" ", "")
    if key in UNITS:
        return UNITS[key]
    return _FOLDED.get(key.lower())


def known_units(dimension: str) -> str:
    """The spellings of one dimension, for messages."""
    names = [k for k, u in UNITS.items() if u.dimension == dimension and u.text == k]
    return ", ".join(names)
