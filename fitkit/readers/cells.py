"""The cells of a delimited table: how a line splits, and which cells are numbers.

A number cell is written plainly (``1.5e3``, ``nan``), with thousands commas in a
decimal-point file (``1,012,500.0``), or with an SI prefix (``1.119k``, ``681.8m``); a
decimal comma is allowed where the delimiter is not a comma.
"""

from __future__ import annotations

import csv
import re

_NUMBER = re.compile(r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?|[-+]?(?:nan|inf)", re.I)
#: "1,012,500.0": thousands grouped by commas (a decimal point file only).
GROUPED = re.compile(r"[-+]?\d{1,3}(?:,\d{3})+(?:\.\d*)?")
GROUP_COMMA = re.compile(r"(?<=\d),(?=\d{3}(?:[.,]|$))")
#: "1.119k", "681.8m", "4.7 u": engineering notation with an SI prefix.
PREFIX_EXPONENTS = {
    "p": -12,
    "n": -9,
    "u": -6,
    "\u00b5": -6,
    "\u03bc": -6,
    "m": -3,
    "k": 3,
    "M": 6,
    "G": 9,
}
PREFIXED = re.compile(r"([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s?([pnu\u00b5\u03bcmkMG])")
COMMENT = ("#", "!", "//", ";", "%")
_PREFIX_LETTER = re.compile("[" + "".join(PREFIX_EXPONENTS) + "]")


def _plain_row(delimiter: str | None, decimal: str) -> re.Pattern:
    """A whole line of plain numbers, each cell padded by blanks other than the delimiter;
    linear in the line's length (a delimiter, or a blank run, between numbers)."""
    number = rf"[-+]?(?:\d+(?:{re.escape(decimal)}\d*)?|{re.escape(decimal)}\d+)(?:[eE][-+]?\d+)?"
    if delimiter is None:
        return re.compile(rf"[ \t]*{number}(?:[ \t]+{number})+[ \t]*")
    pad = "[ ]*" if delimiter == "\t" else "[ \t]*"
    return re.compile(rf"{pad}{number}{pad}(?:{re.escape(delimiter)}{pad}{number}{pad})+")


_PLAIN_ROWS = {
    (delimiter, decimal): _plain_row(delimiter, decimal)
    for delimiter in ("\t", ";", ",", None)
    for decimal in (".", ",")
    if delimiter != decimal
}


def split_cells(line: str, delimiter: str | None) -> list[str]:
    """The cells of one line: split at runs of blanks (``delimiter`` None) or, as the csv
    module reads a quoted cell, at ``delimiter``; each cell stripped.

    Examples
    --------
    >>> split_cells('1,"2,5",3', ",")
    ['1', '2,5', '3']
    """
    if delimiter is None:
        return line.split()
    if '"' not in line:  # what the csv module makes of a line without quotes, quicker
        return [c.strip() for c in line.split(delimiter)]
    try:
        return [c.strip() for c in next(csv.reader([line], delimiter=delimiter))]
    except csv.Error:  # a cell longer than the csv module allows: no table row
        return [line]


def cell_form(cell: str, decimal: str) -> str | None:
    """``"plain"``, ``"grouped"`` (thousands commas), ``"prefixed"`` (SI prefix) or None.

    Examples
    --------
    >>> [cell_form(c, ".") for c in ("1.5", "1,012.5", "4.7u", "x")]
    ['plain', 'grouped', 'prefixed', None]
    """
    cell = cell.strip().strip('"').strip()
    if len(cell) > 64:  # no instrument writes a number this long
        return None
    if decimal == ",":
        if "." in cell:
            return None
        cell = cell.replace(",", ".")
    if _NUMBER.fullmatch(cell):
        return "plain"
    if decimal == "." and GROUPED.fullmatch(cell):
        return "grouped"
    if PREFIXED.fullmatch(cell):
        return "prefixed"
    return None


def is_number(cell: str, decimal: str) -> bool:
    """Whether a cell holds a number in one of the forms of :func:`cell_form`."""
    return cell_form(cell, decimal) is not None


def numeric_fields(line: str, delimiter: str | None, decimal: str) -> int:
    """How many cells the line has when every non-empty cell is a number, else 0."""
    if delimiter is not None and delimiter not in line:
        return 0
    plain = _PLAIN_ROWS.get((delimiter, decimal))
    if plain is not None and plain.fullmatch(line):  # the common case, in one match
        cells = line.split(delimiter)
        if len(line) <= 64 or max(map(len, cells)) <= 64:
            return len(cells)
    if not line.strip() or line.lstrip().startswith(COMMENT):
        return 0
    cells = split_cells(line, delimiter)
    while cells and not cells[-1]:
        cells.pop()
    if len(cells) < 2:
        return 0
    if not all(is_number(c, decimal) for c in cells if c):
        return 0
    return len(cells)


def text_forms(lines: list[str], delimiter: str | None, decimal: str) -> set:
    """The forms other than plain (``"grouped"``, ``"prefixed"``) among the number cells
    of the rows of numbers in ``lines``."""
    if not _may_hold_text_cells("\n".join(lines), delimiter):
        return set()
    forms = {
        cell_form(cell, decimal)
        for ln in lines
        if _may_hold_text_cells(ln, delimiter) and numeric_fields(ln, delimiter, decimal)
        for cell in split_cells(ln, delimiter)
        if cell
    }
    return forms - {"plain", None}


def _may_hold_text_cells(text: str, delimiter: str | None) -> bool:
    """False when no cell in ``text`` can be grouped or prefixed: it holds no prefix
    letter, and no comma inside a cell (in a comma-delimited table, a grouped number is
    quoted)."""
    if ('"' if delimiter == "," else ",") in text:
        return True
    if len(text) < 200:
        return _PREFIX_LETTER.search(text) is not None
    return any(letter in text for letter in PREFIX_EXPONENTS)  # one fast scan a letter
