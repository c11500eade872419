"""Which column is which: header words and units to roles, and the user's overrides.

A role is what a column holds: ``freq``, ``mag`` (magnitude: linear, dB or volts),
``phase``, ``real`` or ``imag`` (parts of a complex value), or ``sigma`` (each point's own
standard deviation). A header such as
``"Gain (dB)"``, ``"f/kHz"``, ``"phase_deg"``, ``"Re(S21)"`` or ``"|Z| [kohm]"`` names
both. The measured quantity (ratio, volts, impedance, S11, S21) follows from the words
(``Z``, ``S21``...) and the unit (V, ohm).

The override dict (``columns=`` of :func:`fitkit.readers.read_sweep`) is documented
there; :func:`parse_overrides` checks it.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from pathlib import Path

from fitkit.errors import InputError
from fitkit.readers.units import Unit, known_units, lookup_unit
from fitkit.sweep import KINDS

ROLES = ("freq", "mag", "phase", "real", "imag", "sigma")
_ROLE_DIMENSIONS = {
    "sigma": ("level", "volt", "ohm", "share"),
    "freq": ("freq",),
    "phase": ("phase",),
    "mag": ("level", "volt", "ohm"),
    "real": ("level", "volt", "ohm"),
    "imag": ("level", "volt", "ohm"),
}
_WORDS = {
    "sigma": {"sigma", "std", "stdev", "stddev", "sd", "uncertainty"},
    "freq": {"f", "freq", "frequency", "frequenz", "hz", "omega", "w", "fr"},
    "phase": {"phase", "phi", "angle", "ang", "arg", "theta", "ph", "phs"},
    "real": {"re", "real", "resistance"},
    "imag": {"im", "imag", "imaginary", "reactance"},
    "mag": {
        "mag",
        "magnitude",
        "amplitude",
        "ampl",
        "amp",
        "gain",
        "abs",
        "level",
        "response",
        "z",
        "h",
        "db",
        "ratio",
        "transfer",
        "transmission",
        "reflection",
        "voltage",
        "vout",
        "v",
        "out",
        "output",
        "s11",
        "s21",
        "impedance",
        "zin",
        "|z|",
        "|h|",
    },
}
_SPARAM = re.compile(r"s\s*\(?\s*([12])\s*[,_]?\s*([12])\s*\)?")
_IMPEDANCE_WORDS = {"z", "|z|", "zin", "impedance", "resistance", "reactance"}


@dataclass(frozen=True)
class Column:
    """A column of the table as the header names it.

    Attributes
    ----------
    position : int
        1-based position in the row.
    name : str
        The header text.
    words : frozenset of str
        The header's words, lower case, without the unit.
    unit : Unit or None
        The unit the header states.
    tag : str or None
        The quantity the words name: ``"s11"``, ``"s21"``, ``"impedance"`` or None.
    """

    position: int
    name: str
    words: frozenset
    unit: Unit | None
    tag: str | None


@dataclass(frozen=True)
class Override:
    """The user's word on one role: which column (name or 1-based position) and unit."""

    column: str | int | None
    unit: Unit | None


@functools.lru_cache(maxsize=1024)
def describe_column(position: int, name: str) -> Column:
    """Split a header cell into words, unit and the quantity it names (remembered: the
    files of a batch repeat their header).

    Examples
    --------
    >>> c = describe_column(2, "Gain (dB)")
    >>> sorted(c.words), c.unit.text
    (['gain'], 'dB')
    >>> describe_column(1, "f/kHz").unit.text
    'kHz'
    """
    text = name.strip()
    unit = None
    for bracket in re.finditer(r"[\(\[]([^\(\)\[\]]*)[\)\]]", text):
        found = lookup_unit(bracket.group(1))
        if found is not None:
            unit = found
            text = text[: bracket.start()] + " " + text[bracket.end() :]
            break
    if unit is None and "/" in text:
        head, _, tail = text.rpartition("/")
        found = lookup_unit(tail)
        if found is not None and head.strip():
            unit, text = found, head
    words = re.findall(r"\|?[a-z0-9]+\|?|[\u00b0\u03a9\u2126]", text.lower())
    single_ok = ("db", "hz", "khz", "mhz", "deg", "v", "mv", "vpp")
    if unit is None and words and (len(words) > 1 or words[0] in single_ok):
        # a trailing unit word: "freq_hz", "Mag dB", or a header that is only a unit
        unit = lookup_unit(words[-1])
        if unit is not None:
            words.pop()
    if unit is None and "db" in words:
        # "dB(S21)", "S21 dB mag": the unit written as a word among the others
        unit = lookup_unit("dB")
        words.remove("db")
    wordset = frozenset(words)
    return Column(position, name.strip(), wordset, unit, _tag(text.lower(), wordset))


def _tag(text: str, words: frozenset) -> str | None:
    m = _SPARAM.search(text)
    if m and re.search(r"(^|[^a-z])s\s*\(?\s*[12]", text):
        pair = m.group(1) + m.group(2)
        return {"11": "s11", "21": "s21", "12": "s12", "22": "s22"}[pair]
    if words & _IMPEDANCE_WORDS:
        return "impedance"
    return None


def guess_role(col: Column) -> str | None:
    """The role a column's words and unit suggest, or None when it says nothing known."""
    dim = col.unit.dimension if col.unit else None
    if col.words & _WORDS["sigma"]:
        return "sigma"
    if dim == "freq" or (col.words & _WORDS["freq"] and dim is None):
        return "freq"
    if dim == "phase" or col.words & _WORDS["phase"]:
        return "phase"
    if col.words & _WORDS["real"] or (col.words == {"r"} and dim == "ohm"):
        return "real"
    if col.words & _WORDS["imag"] or (col.words == {"x"} and dim == "ohm"):
        return "imag"
    if dim in ("level", "volt", "ohm") or col.words & _WORDS["mag"] or col.tag:
        return "mag"
    return None


def parse_overrides(columns: dict | None, path: Path) -> tuple[dict[str, Override], str | None]:
    """Check the ``columns=`` dict; return the per-role overrides and the stated kind.

    Raises
    ------
    InputError
        For an unknown role, an unknown unit, a unit that does not fit its role, or an
        unknown kind.
    """
    if not columns:
        return {}, None
    out: dict[str, Override] = {}
    kind = None
    for key, spec in columns.items():
        if key == "kind":
            if spec not in KINDS:
                raise InputError(
                    f"unknown measured quantity {spec!r} in the column settings",
                    remedy=f"use one of: {', '.join(KINDS)}",
                    path=path,
                )
            kind = spec
            continue
        if key not in ROLES:
            raise InputError(
                f"unknown column role {key!r} in the column settings",
                remedy=f"use the roles {', '.join(ROLES)} (and 'kind')",
                path=path,
            )
        out[key] = _override(key, spec, path)
    return out, kind


def _override(role: str, spec, path: Path) -> Override:
    if isinstance(spec, dict):
        unknown = set(spec) - {"column", "unit"}
        if unknown:
            raise InputError(
                f"unknown setting {sorted(unknown)[0]!r} for the {role} column",
                remedy="give 'column' (header name or 1-based position) and 'unit'",
                path=path,
            )
        column, unit_text = spec.get("column"), spec.get("unit")
    elif isinstance(spec, int) and not isinstance(spec, bool):
        column, unit_text = spec, None
    elif isinstance(spec, str):
        column, unit_text = spec, None
        name, sep, tail = spec.rpartition(":")
        if sep and lookup_unit(tail) is not None:
            column, unit_text = name, tail
    else:
        raise InputError(
            f"cannot read the {role} column setting {spec!r}",
            remedy="give a header name, a 1-based position, or 'NAME:UNIT'",
            path=path,
        )
    if isinstance(column, str):
        column = int(column) if column.strip().isdigit() else (column.strip() or None)
    unit = None
    if unit_text is not None:
        unit = lookup_unit(str(unit_text))
        if unit is None or unit.dimension not in _ROLE_DIMENSIONS[role]:
            allowed = "; ".join(known_units(d) for d in _ROLE_DIMENSIONS[role])
            raise InputError(
                f"unit {unit_text!r} does not fit the {role} column",
                remedy=f"use one of: {allowed}",
                path=path,
            )
    return Override(column, unit)


def find_column(spec: str | int, header: list[Column], path: Path, line: int | None) -> Column:
    """The header column a user named, by 1-based position or by its name.

    Raises
    ------
    InputError
        When no column matches, listing the columns there are.
    """
    if isinstance(spec, int):
        if 1 <= spec <= len(header):
            return header[spec - 1]
    else:
        want = spec.casefold()
        for match in (
            lambda c: c.name == spec,
            lambda c: c.name.casefold() == want,
            lambda c: " ".join(sorted(c.words)) == " ".join(sorted(want.split())),
        ):
            found = [c for c in header if match(c)]
            if found:
                return found[0]
    listing = ", ".join(f"{c.position}: {c.name!r}" for c in header)
    raise InputError(
        f"no column {spec!r} (the columns are {listing})",
        remedy="name a column as the header spells it, or by its position counting from 1",
        path=path,
        line=line,
    )
