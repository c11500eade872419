"""Delimited text tables as instruments and scripts write them.

The first lines are sniffed (delimiter, decimal mark, metadata and comment lines, the
header): the candidate dialects vote on the lines up to eight rows of numbers, and on
the first 120 lines when that vote is not clear. A table of plain numbers that fits in
the first read is then parsed by numpy from the text already in memory; anything else
(a larger file, numbers with thousands commas or SI prefixes, text or blanks among the
rows) by pandas, in :mod:`fitkit.readers.pandas_rows`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from fitkit.errors import InputError
from fitkit.readers.cells import COMMENT, is_number, numeric_fields, split_cells, text_forms
from fitkit.readers.columns import describe_column, parse_overrides
from fitkit.readers.layout import ColumnInfo, Reading
from fitkit.readers.roles import Plan, plan_columns
from fitkit.readers.text import FileText, file_sha256, read_head, split_lines
from fitkit.readers.tidy import refuse_infinite, tidy_sweep
from fitkit.readers.units import lookup_unit

#: Candidate (delimiter, decimal mark); None is a run of spaces or tabs.
_DIALECTS = (("\t", "."), (";", "."), (",", "."), (None, "."), ("\t", ","), (";", ","), (None, ","))
_DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", None: "spaces"}
_SNIFF_LINES = 120  # enough for a preamble, a header and rows to vote on the dialect
_SNIFF_ROWS = 8  # rows of numbers enough for a clear vote
#: a line that may be a row of numbers: it opens with a digit, sign, point or quote
_ROW_START = re.compile(r"\s*[-+.\d\"]")


@dataclass
class Dialect:
    """How a table is written, as sniffed from its first lines."""

    delimiter: str | None
    decimal: str
    encoding: str
    header_line: int | None  # 1-based, None when the table has no header
    first_data_line: int  # 1-based line where the rows of numbers start
    fields: int
    header: list = field(default_factory=list)
    metadata: dict = field(default_factory=dict)
    units_line: int | None = None  # 1-based line of a row of units under the header
    text_cells: bool = False  # numbers written with thousands commas or SI prefixes

    def describe(self) -> dict:
        details = {
            "delimiter": _DELIMITER_NAMES[self.delimiter],
            "decimal mark": "comma" if self.decimal == "," else "point",
            "encoding": self.encoding,
            "header": f"line {self.header_line}" if self.header_line else "none",
        }
        if self.units_line:
            details["units"] = f"line {self.units_line}"
        if self.text_cells:
            details["numbers"] = "with thousands commas or SI prefixes"
        details["data from"] = f"line {self.first_data_line}"
        return details


def read_table(
    path: Path,
    *,
    columns: dict | None = None,
    duplicates: str = "average",
    head: FileText | None = None,
) -> Reading:
    """Read a delimited text sweep; see :func:`fitkit.readers.read_sweep` for the rules.

    ``head`` is the start of the file as :func:`fitkit.readers.text.read_head` read it,
    when already read.

    Raises
    ------
    InputError
        When the table cannot be read, or holds no usable sweep.
    """
    overrides, kind_asked = parse_overrides(columns, path)
    head = head or read_head(path)
    lines = split_lines(head.head)
    dialect = _sniff(lines, head.encoding, head.complete, path)
    header = dialect.header or [describe_column(i + 1, "") for i in range(dialect.fields)]
    if not dialect.header and not {"freq", "mag", "real"} & {
        r for r, ov in overrides.items() if ov.column is not None
    }:
        raise InputError(
            "the table has no header line naming its columns",
            remedy="add a header such as 'freq (Hz), gain (dB)', or name the columns by "
            "position, e.g. --column freq=1:Hz --column mag=2:dB",
            path=path,
            line=dialect.first_data_line,
        )
    plan = plan_columns(header, overrides, kind_asked, path, dialect.header_line)
    notes = list(head.notes) + plan.notes
    cells = _parse_plain_rows(lines, dialect, plan) if head.complete else None
    if cells is not None:
        line_numbers = dialect.first_data_line
    else:
        from fitkit.readers.pandas_rows import parse_rows

        cells, line_numbers = parse_rows(path, dialect, plan, notes)
    names = {role: col.name or col.position for role, (col, _) in plan.roles.items()}
    refuse_infinite(cells, line_numbers, names, path=path)
    freq, values = plan.values(cells)
    sigma, sigma_relative = plan.sigma(cells)
    del cells  # frees the parser's block before the clean-up makes its own arrays
    freq_col = plan.roles["freq"][0]
    sigma_col = plan.roles["sigma"][0] if sigma is not None else None
    sweep = tidy_sweep(
        freq,
        values,
        line_numbers,
        path=path,
        kind=plan.kind,
        recorded_in_db=plan.in_db,
        metadata=dialect.metadata,
        notes=notes,
        duplicates=duplicates,
        freq_column=freq_col.name or freq_col.position,
        sha256=head.sha256 or file_sha256(path),
        sigma=sigma,
        sigma_relative=sigma_relative,
        sigma_column=sigma_col and (sigma_col.name or sigma_col.position),
    )
    used = {col.position: (role, unit.text) for role, (col, unit) in plan.roles.items()}
    infos = [ColumnInfo(c.position, c.name, *used.get(c.position, (None, None))) for c in header]
    return Reading(sweep=sweep, format="delimited text", details=dialect.describe(), columns=infos)


def _parse_plain_rows(lines: list[str], dialect: Dialect, plan: Plan) -> dict | None:
    """Each role's numbers when every row below the header is a full row of plain numbers
    (parsed by numpy from the lines in memory), else None."""
    rows = lines[dialect.first_data_line - 1 :]
    while rows and not rows[-1].strip():  # the end of the file
        rows.pop()
    if dialect.text_cells or not rows:
        return None
    if dialect.decimal == ",":
        rows = split_lines("\n".join(rows).replace(",", "."))
    try:
        table = np.loadtxt(rows, delimiter=dialect.delimiter, comments=None, ndmin=2)
    except ValueError:  # text, an empty cell, a ragged row: pandas says where
        return None
    if table.shape != (len(rows), dialect.fields):  # a blank line among the rows
        return None
    return {role: table[:, col.position - 1] for role, (col, _) in plan.roles.items()}


def _sniff(lines: list[str], encoding: str, complete: bool, path: Path) -> Dialect:
    """Find the delimiter, decimal mark, header and metadata in the file's first lines."""
    best = _vote(lines)
    if best is None:
        header_only = any(ln.strip() and not ln.lstrip().startswith(COMMENT) for ln in lines)
        raise InputError(
            "no row of numbers found" + (" (only a header or text)" if header_only else ""),
            remedy="export the sweep as rows of numbers under a header line, e.g. "
            "'freq (Hz), gain (dB)'",
            path=path,
            line=1 if complete else None,
        )
    delimiter, decimal = best
    first, fields = next(
        (i, n) for i, ln in enumerate(lines) if (n := numeric_fields(ln, delimiter, decimal))
    )
    header_index, names = _find_header(lines, first, delimiter, fields)
    units_index = None
    if header_index is not None and _all_units(names):
        above, above_names = _find_header(lines, header_index, delimiter, fields)
        if above is not None and not _all_units(above_names):
            units_index, header_index = header_index, above
            names = [f"{n} ({u})" if u.strip() else n for n, u in zip(above_names, names)]
    header = [describe_column(i + 1, n) for i, n in enumerate(names)]
    preamble = lines[: header_index if header_index is not None else first]
    return Dialect(
        delimiter=delimiter,
        decimal=decimal,
        encoding=encoding,
        header_line=None if header_index is None else header_index + 1,
        first_data_line=first + 1,
        fields=max(fields, len(split_cells(lines[first], delimiter))),
        header=header,
        metadata=_metadata(preamble, delimiter),
        units_line=None if units_index is None else units_index + 1,
        text_cells=bool(text_forms(lines[first:_SNIFF_LINES], delimiter, decimal)),
    )


def _vote(lines: list[str]) -> tuple | None:
    """The (delimiter, decimal mark) under which most lines are rows of numbers; ties go
    to the first of ``_DIALECTS``; None when no line is.

    The lines up to the ``_SNIFF_ROWS``-th that may be a row vote first; the first
    ``_SNIFF_LINES`` lines vote when those leave a doubt (a line that may be a row but
    is not one under the winner, or numbers that are not plain).
    """
    head = lines[:_SNIFF_LINES]
    window = _row_window(head)
    best, best_count, plain = _count_votes(window)
    if len(window) == len(head):
        return best
    # the window ends at its _SNIFF_ROWS-th line that may be a row
    if best is not None and best_count == _SNIFF_ROWS and plain:
        return best
    return _count_votes(head)[0]


def _row_window(lines: list[str]) -> list[str]:
    """The lines up to and including the ``_SNIFF_ROWS``-th that may be a row."""
    seen = 0
    for i, line in enumerate(lines):
        if _ROW_START.match(line):
            seen += 1
            if seen == _SNIFF_ROWS:
                return lines[: i + 1]
    return lines


def _count_votes(lines: list[str]) -> tuple:
    """The dialect under which most lines are rows of numbers, that count, and whether
    its numbers are all plain. A tie goes to the dialect whose numbers need no thousands
    commas or prefixes (under ';', '80,000;-21,589' is far likelier decimal commas than
    eighty thousand and a gain of -21589 dB), then to the one tried first."""
    best, best_score = None, (0, False)
    for delimiter, decimal in _DIALECTS:
        if delimiter is None:
            split = [ln for ln in lines if len(ln.split()) > 1]
        else:
            split = [ln for ln in lines if delimiter in ln]
        if len(split) < best_score[0]:  # cannot reach the count
            continue
        rows = [ln for ln in split if numeric_fields(ln, delimiter, decimal)]
        if not rows or len(rows) < best_score[0]:
            continue
        score = (len(rows), not text_forms(rows, delimiter, decimal))
        if score > best_score:
            best, best_score = (delimiter, decimal), score
    return best, best_score[0], best_score[1]


def _all_units(cells: list[str]) -> bool:
    """A row of units under the header: every non-empty cell a unit, e.g. 'Hz;Vpp;dB;°'."""
    given = [c.strip().strip("()[]") for c in cells if c.strip()]
    return bool(given) and all(lookup_unit(c) is not None for c in given)


def _find_header(lines: list[str], first: int, delimiter, fields: int):
    """The last text line above the first row of numbers with a cell per column.

    Returns its index and cells, or ``(None, [])``; a header may be written as a
    comment (``# freq(Hz) gain(dB)``).
    """
    for i in range(first - 1, -1, -1):
        text = lines[i].strip()
        if not text:
            continue
        commented = text.startswith(COMMENT)
        cells = _header_cells(text.lstrip("#!;%/ ") if commented else text, delimiter, fields)
        if len(cells) == fields:
            return i, cells
        if not commented:
            break
    return None, []


def _header_cells(line: str, delimiter, fields: int) -> list[str]:
    cells = split_cells(line, delimiter)
    while len(cells) > fields and not cells[-1]:
        cells.pop()
    if delimiter is None and len(cells) != fields:
        # spaces inside names: "Freq (Hz)  Gain (dB)" -- try wide gaps, then units
        cells = re.split(r"\s{2,}|\t", line.strip())
        if len(cells) != fields:
            cells = re.findall(r"\S+(?:\s*[\(\[][^\)\]]*[\)\]])?", line)
    return cells


def _metadata(preamble: list[str], delimiter) -> dict:
    """'key,value', 'key: value' and 'key = value' lines above the header."""
    found: dict[str, str] = {}
    for line in preamble:
        text = line.strip().lstrip("#!;%/ ").strip()
        if not text:
            continue
        m = re.match(r"([^:=,;\t]{1,60}?)\s*([:=,;\t])\s*(.+)", text)
        if not m or is_number(m.group(1), "."):
            continue
        key, sep, value = m.group(1).strip(), m.group(2), m.group(3).strip()
        if sep == ":" and key[-1].isdigit() and value[0].isdigit():
            continue  # a time of day, "exported 2026-11-30 10:12": no key in it
        if delimiter:
            value = ", ".join(c for c in split_cells(value, delimiter) if c)
        found[key] = value
    return found
