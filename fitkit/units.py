"""SI prefixes in and out: engineering notation for printing, prefixed values for input.

Printing follows common practice for measured values: the uncertainty with two
significant digits, the value rounded to the same decimal place, both with one prefix.
Plain ASCII ("u" for micro, "ohm") so output survives any terminal or log file.
"""

from __future__ import annotations

import math
import re

from fitkit.errors import SetupError

PREFIXES = {
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "\u00b5": 1e-6,  # micro sign
    "\u03bc": 1e-6,  # Greek mu
    "m": 1e-3,
    "": 1.0,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "meg": 1e6,
    "G": 1e9,
}
_PRINT_PREFIXES = {-12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"


def parse_quantity(text: str | float | int, unit: str, *, what: str = "value") -> float:
    """Read a value such as ``"4.7k"``, ``"4k7"``, ``"12 pF"`` or ``"100 ohm"`` in SI.

    Parameters
    ----------
    text : str or number
        The value as typed; numbers pass through unchanged.
    unit : str
        The unit the value is in (``"ohm"``, ``"F"``, ``"H"``, ``"Hz"``, ``"V"``); it may be
        written after the prefix or left out.
    what : str
        What the value is, for the error message.

    Raises
    ------
    SetupError
        When the text is not a number with an optional SI prefix and the expected unit.

    Examples
    --------
    >>> parse_quantity("4k7", "ohm")
    4700.0
    >>> parse_quantity("12 pF", "F")
    1.2e-11
    """
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return _finite(float(text), text, unit, what)
    raw = str(text).strip()
    s = raw.replace(" ", "")
    for spelling in _unit_spellings(unit):
        if spelling and s.lower().endswith(spelling.lower()) and len(s) > len(spelling):
            s = s[: -len(spelling)]
            break
    # the trade's resistor notation: 4k7 = 4.7k, 2R2 = 2.2
    m = re.fullmatch(r"(\d+)([pnumkKMGR\u00b5])(\d+)", s)
    if m:
        prefix = "" if m.group(2) == "R" else m.group(2)
        return float(f"{m.group(1)}.{m.group(3)}") * PREFIXES[prefix]
    m = re.fullmatch(rf"({_NUMBER})(meg|[pnumkKMG\u00b5\u03bc]?)", s)
    if not m:
        raise SetupError(
            f"cannot read {what} {raw!r} as a number" + (f" in {unit}" if unit else ""),
            remedy=f"write it as a number with an optional SI prefix, e.g. {_example(unit)}",
        )
    return _finite(float(m.group(1)) * PREFIXES[m.group(2)], raw, unit, what)


def _finite(value: float, raw, unit: str, what: str) -> float:
    if not math.isfinite(value):
        raise SetupError(
            f"{what} {raw!r} is not a finite number",
            remedy=f"write a value a bench can have, e.g. {_example(unit)}",
        )
    return value


_EXAMPLES = {
    "ohm": "'47', '4.7k' or '4k7'",
    "F": "'15p' or '1.5nF'",
    "H": "'220u' or '1.2mH'",
    "Hz": "'455k' or '1.6MHz'",
    "V": "'2' or '500mV'",
    "": "'2.5' or '1.5k'",
}


def _example(unit: str) -> str:
    return _EXAMPLES.get(unit, f"'4.7k{unit}'")


def _unit_spellings(unit: str) -> list[str]:
    if unit == "ohm":
        return ["ohms", "ohm", "\u03a9", "\u2126", "r"]
    return [unit]


#: units printed without an SI prefix
_NO_PREFIX = ("dB", "dB/decade")


def format_quantity(value: float, unit: str = "", stderr: float | None = None) -> str:
    """Engineering notation with an SI prefix, and the uncertainty when given.

    Examples
    --------
    >>> format_quantity(98.71e-6, "H", 0.42e-6)
    '98.71 uH +/- 0.42 uH'
    >>> format_quantity(63.04, "", 1.53)
    '63.0 +/- 1.5'
    >>> format_quantity(47.0, "ohm")
    '47 ohm'
    """
    if value is None or not math.isfinite(value):
        return f"{value} {unit}".strip()
    prefixed = unit and unit not in _NO_PREFIX
    scale_exp = _prefix_exponent(value if value != 0 else (stderr or 0.0)) if prefixed else 0
    scale = 10.0**scale_exp
    prefix = _PRINT_PREFIXES.get(scale_exp, "") if prefixed else ""
    suffix = f" {prefix}{unit}" if unit else ""
    v = value / scale
    if stderr is None or not math.isfinite(stderr) or stderr <= 0:
        text = _significant(v, 4)
        return f"{text}{suffix}"
    e = stderr / scale
    decimals = max(0, 1 - int(math.floor(math.log10(e))))
    return f"{v:.{decimals}f}{suffix} +/- {e:.{decimals}f}{suffix}"


def format_to(value: float, unit: str, u: float | None) -> str:
    """The value alone, to the last digit its uncertainty ``u`` calls for (as
    :func:`format_quantity` prints it with ``u``); four significant figures without one.

    Examples
    --------
    >>> format_to(336.4718e3, "Hz", 0.21e3), format_to(336.4718e3, "Hz", None)
    ('336.47 kHz', '336.5 kHz')
    """
    return format_quantity(value, unit, u).split(" +/- ")[0]


def engineering_scale(value: float) -> tuple[float, str]:
    """The power of 1000 and its SI prefix that :func:`format_quantity` would use.

    Examples
    --------
    >>> engineering_scale(339e3)
    (1000.0, 'k')
    """
    exp = _prefix_exponent(value)
    return 10.0**exp, _PRINT_PREFIXES.get(exp, "")


def _prefix_exponent(value: float) -> int:
    if value == 0 or not math.isfinite(value):
        return 0
    exp = int(math.floor(math.log10(abs(value)) / 3.0)) * 3
    return min(max(exp, -12), 9)


def _significant(v: float, digits: int) -> str:
    if v == 0:
        return "0"
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(v)))))
    text = f"{v:.{decimals}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text
