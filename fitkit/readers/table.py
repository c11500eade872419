"""Delimited text tables as instruments and scripts write them.

The first part of the file is sniffed line by line (delimiter, decimal mark, metadata
and comment lines, the header); the bulk of the rows is then parsed by pandas in one
vectorised pass. Only when that pass meets a cell that is not a number are the rows
looked at one by one, to skip repeated headers and comments and to name a bad line.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from fitkit.errors import InputError
from fitkit.readers.columns import describe_column, parse_overrides
from fitkit.readers.layout import ColumnInfo, Reading
from fitkit.readers.roles import Plan, plan_columns
from fitkit.readers.text import file_sha256, read_all, read_head
from fitkit.readers.tidy import line_list, refuse_infinite, tidy_sweep
from fitkit.readers.units import lookup_unit

_NUMBER = re.compile(r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?|[-+]?(?:nan|inf)", re.I)
#: "1,012,500.0": thousands grouped by commas (a decimal point file only).
_GROUPED = re.compile(r"[-+]?\d{1,3}(?:,\d{3})+(?:\.\d*)?")
_GROUP_COMMA = re.compile(r"(?<=\d),(?=\d{3}(?:[.,]|$))")
#: "1.119k", "681.8m", "4.7 u": engineering notation with an SI prefix.
_PREFIX_EXPONENTS = {
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
_PREFIXED = re.compile(r"([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s?([pnu\u00b5\u03bcmkMG])")
_COMMENT = ("#", "!", "//", ";", "%")
#: Candidate (delimiter, decimal mark); None is a run of spaces or tabs.
_DIALECTS = (("\t", "."), (";", "."), (",", "."), (None, "."), ("\t", ","), (";", ","), (None, ","))
_DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", None: "spaces"}
_LINE_BREAK = re.compile(r"\r\n|\r|\n")
_SNIFF_LINES = 120  # enough for a preamble, a header and rows to vote on the dialect


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
) -> Reading:
    """Read a delimited text sweep; see :func:`fitkit.readers.read_sweep` for the rules.

    Raises
    ------
    InputError
        When the table cannot be read, or holds no usable sweep.
    """
    overrides, kind_asked = parse_overrides(columns, path)
    head = read_head(path)
    lines = _LINE_BREAK.split(head.head)
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
    cells, line_numbers = _parse_rows(path, dialect, plan, notes)
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
        sha256=file_sha256(path),
        sigma=sigma,
        sigma_relative=sigma_relative,
        sigma_column=sigma_col and (sigma_col.name or sigma_col.position),
    )
    used = {col.position: (role, unit.text) for role, (col, unit) in plan.roles.items()}
    infos = [ColumnInfo(c.position, c.name, *used.get(c.position, (None, None))) for c in header]
    return Reading(sweep=sweep, format="delimited text", details=dialect.describe(), columns=infos)


def _split(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    try:
        return [c.strip() for c in next(csv.reader([line], delimiter=delimiter))]
    except csv.Error:  # a cell longer than the csv module allows: no table row
        return [line]


def _cell_form(cell: str, decimal: str) -> str | None:
    """``"plain"``, ``"grouped"`` (thousands commas), ``"prefixed"`` (SI prefix) or None."""
    cell = cell.strip().strip('"').strip()
    if len(cell) > 64:  # no instrument writes a number this long
        return None
    if decimal == ",":
        if "." in cell:
            return None
        cell = cell.replace(",", ".")
    if _NUMBER.fullmatch(cell):
        return "plain"
    if decimal == "." and _GROUPED.fullmatch(cell):
        return "grouped"
    if _PREFIXED.fullmatch(cell):
        return "prefixed"
    return None


def _is_number(cell: str, decimal: str) -> bool:
    return _cell_form(cell, decimal) is not None


def to_numbers(column: pd.Series, decimal: str) -> pd.Series:
    """Cells as text to float: decimal comma, thousands commas, SI prefixes; NaN if none.

    Examples
    --------
    >>> to_numbers(pd.Series(["1.119k", '1,012,500.0', "681.8m", "x"]), ".").tolist()
    [1119.0, 1012500.0, 0.6818, nan]
    """
    column = column.str.strip().str.strip('"').str.strip()
    if decimal == ",":
        column = column.str.replace(",", ".", regex=False)
    else:
        column = column.str.replace(_GROUP_COMMA, "", regex=True)
    numbers = pd.to_numeric(column, errors="coerce")
    parts = column.str.fullmatch(_PREFIXED.pattern)
    if parts.any():
        found = column[parts.fillna(False)].str.extract(_PREFIXED.pattern)
        exponent = found[1].map(_PREFIX_EXPONENTS).to_numpy()
        value = pd.to_numeric(found[0]).to_numpy()
        # one correctly rounded step from the cell: 681.8m is 681.8 / 1000 exactly rounded
        scaled = np.where(
            exponent > 0, value * 10.0 ** np.abs(exponent), value / 10.0 ** np.abs(exponent)
        )
        scaled = pd.Series(scaled, index=found.index)
        numbers = numbers.where(~parts.fillna(False), scaled)
    return numbers


def _numeric_fields(line: str, delimiter: str | None, decimal: str) -> int:
    """How many cells the line has when every non-empty cell is a number, else 0."""
    if not line.strip() or line.lstrip().startswith(_COMMENT):
        return 0
    cells = _split(line, delimiter)
    while cells and not cells[-1]:
        cells.pop()
    if len(cells) < 2 or not all(_is_number(c, decimal) for c in cells if c):
        return 0
    return len(cells)


def _sniff(lines: list[str], encoding: str, complete: bool, path: Path) -> Dialect:
    """Find the delimiter, decimal mark, header and metadata in the file's first lines."""
    best, best_count = None, 0
    for delimiter, decimal in _DIALECTS:
        count = sum(1 for ln in lines[:_SNIFF_LINES] if _numeric_fields(ln, delimiter, decimal))
        if count > best_count:
            best, best_count = (delimiter, decimal), count
    if best is None:
        header_only = any(ln.strip() and not ln.lstrip().startswith(_COMMENT) for ln in lines)
        raise InputError(
            "no row of numbers found" + (" (only a header or text)" if header_only else ""),
            remedy="export the sweep as rows of numbers under a header line, e.g. "
            "'freq (Hz), gain (dB)'",
            path=path,
            line=1 if complete else None,
        )
    delimiter, decimal = best
    first = next(i for i, ln in enumerate(lines) if _numeric_fields(ln, delimiter, decimal))
    fields = _numeric_fields(lines[first], delimiter, decimal)
    header_index, names = _find_header(lines, first, delimiter, fields)
    units_index = None
    if header_index is not None and _all_units(names):
        above, above_names = _find_header(lines, header_index, delimiter, fields)
        if above is not None and not _all_units(above_names):
            units_index, header_index = header_index, above
            names = [f"{n} ({u})" if u.strip() else n for n, u in zip(above_names, names)]
    header = [describe_column(i + 1, n) for i, n in enumerate(names)]
    preamble = lines[: header_index if header_index is not None else first]
    forms = {
        _cell_form(cell, decimal)
        for ln in lines[first:_SNIFF_LINES]
        if _numeric_fields(ln, delimiter, decimal)
        for cell in _split(ln, delimiter)
        if cell
    }
    return Dialect(
        delimiter=delimiter,
        decimal=decimal,
        encoding=encoding,
        header_line=None if header_index is None else header_index + 1,
        first_data_line=first + 1,
        fields=max(fields, len(_split(lines[first], delimiter))),
        header=header,
        metadata=_metadata(preamble, delimiter),
        units_line=None if units_index is None else units_index + 1,
        text_cells=bool(forms & {"grouped", "prefixed"}),
    )


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
        commented = text.startswith(_COMMENT)
        cells = _header_cells(text.lstrip("#!;%/ ") if commented else text, delimiter, fields)
        if len(cells) == fields:
            return i, cells
        if not commented:
            break
    return None, []


def _header_cells(line: str, delimiter, fields: int) -> list[str]:
    cells = _split(line, delimiter)
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
        m = re.match(r"([^:=,;\t]{1,60}?)\s*[:=,;\t]\s*(.+)", text)
        if m and not _is_number(m.group(1), "."):
            value = m.group(2).strip()
            if delimiter:
                value = ", ".join(c for c in _split(value, delimiter) if c)
            found[m.group(1).strip()] = value
    return found


def _parse_rows(path: Path, dialect: Dialect, plan: Plan, notes: list):
    """Parse the rows with pandas; return each role's numbers and the rows' file lines.

    The lines are an array, or the first row's line when the rows follow one another.
    """
    wanted = {role: col.position - 1 for role, (col, _) in plan.roles.items()}
    kwargs = dict(
        sep=r"\s+" if dialect.delimiter is None else dialect.delimiter,
        decimal=dialect.decimal,
        header=None,
        names=list(range(dialect.fields)),
        skiprows=dialect.first_data_line - 1,
        skip_blank_lines=False,
        engine="c",  # its float parser skips the spaces around a number itself
    )
    if dialect.text_cells:
        return _parse_rows_slowly(path, dialect, plan, wanted, kwargs, notes)
    try:
        frame = _read_csv(
            path, dialect, notes, dtype=dict.fromkeys(wanted.values(), np.float64), **kwargs
        )
    except ValueError:
        return _parse_rows_slowly(path, dialect, plan, wanted, kwargs, notes)
    cells = {role: frame[i].to_numpy(dtype=np.float64) for role, i in wanted.items()}
    return cells, dialect.first_data_line


def _read_csv(path: Path, dialect: Dialect, notes: list, **kwargs) -> pd.DataFrame:
    """pandas.read_csv with the sniffed encoding; a UTF-8 file that turns out to be
    Latin-1 past its head is read again (Latin-1 decodes any byte); a ragged row or a
    broken quote is refused with its line."""
    try:
        try:
            return pd.read_csv(path, encoding=dialect.encoding, **kwargs)
        except UnicodeDecodeError:
            if dialect.encoding != "utf-8":
                raise InputError(
                    f"the file is not valid {dialect.encoding} text past its first lines",
                    remedy="export the sweep again as plain text (UTF-8)",
                    path=path,
                ) from None
            dialect.encoding = "latin-1"
            notes.append("not valid UTF-8; decoded as Latin-1")
            return pd.read_csv(path, encoding=dialect.encoding, **kwargs)
    except pd.errors.ParserError as exc:
        raise _ragged(exc, path, dialect) from None


def _ragged(exc: Exception, path: Path, dialect: Dialect) -> InputError:
    m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(exc))
    if not m:
        quote = re.search(r"EOF inside string starting at row (\d+)", str(exc))
        return InputError(
            'a quote (") is opened and never closed'
            if quote
            else "the rows cannot be split into cells",
            remedy="repair the row: remove the stray quote or delimiter, or delete the row",
            path=path,
            line=dialect.first_data_line + int(quote.group(1)) - 1 if quote else None,
        )
    return InputError(
        f"the row has {m.group(3)} cells where the table has {m.group(1)}",
        remedy="repair the row (a stray delimiter?) or delete it",
        path=path,
        line=int(m.group(2)),
    )


def _parse_rows_slowly(path, dialect, plan, wanted, kwargs, notes):
    """Rows with text in a number column: skip repeated headers and comments, else refuse."""
    frame = _read_csv(path, dialect, notes, dtype=str, skipinitialspace=True, **kwargs)
    raw = _LINE_BREAK.split(read_all(path, dialect.encoding))
    first = dialect.first_data_line
    header_text = raw[dialect.header_line - 1].strip() if dialect.header_line else None
    cells: dict[str, np.ndarray] = {}
    text_rows = np.zeros(len(frame), dtype=bool)
    for role, i in wanted.items():
        column = frame[i]
        numbers = to_numbers(column, dialect.decimal)
        not_nan = ~column.str.strip().str.lower().isin(("nan", "-nan", "+nan"))
        text_rows |= (column.notna() & numbers.isna() & not_nan).to_numpy()
        cells[role] = np.array(numbers, dtype=np.float64)
    skipped_comments, skipped_headers = [], []
    for row in np.flatnonzero(text_rows):
        line_no = first + int(row)
        text = raw[line_no - 1].strip()
        if text.startswith(_COMMENT):
            skipped_comments.append(line_no)
        elif text == header_text:
            skipped_headers.append(line_no)
        else:
            _refuse_text_row(path, dialect, plan, frame.iloc[row], text, line_no)
    for role in cells:
        cells[role][text_rows] = np.nan
    keep = ~text_rows
    if skipped_headers:
        notes.append(
            f"skipped {len(skipped_headers)} repeated header line(s) "
            f"({line_list(np.array(skipped_headers))})"
        )
    if skipped_comments:
        notes.append(
            f"skipped {len(skipped_comments)} comment line(s) among the rows "
            f"({line_list(np.array(skipped_comments))})"
        )
    lines = np.arange(len(frame)) + first
    return {role: v[keep] for role, v in cells.items()}, lines[keep]


def _refuse_text_row(path, dialect, plan, row, text, line_no) -> None:
    if dialect.header and all(
        not _is_number(str(c), dialect.decimal) for c in row.dropna().tolist()
    ):
        raise InputError(
            f"a second header {text!r} differs from the first (mixed units?)",
            remedy="split the file where the header changes, or convert it to one unit",
            path=path,
            line=line_no,
        )
    for role, (col, _) in plan.roles.items():
        cell = row[col.position - 1]
        if isinstance(cell, str) and not _is_number(cell, dialect.decimal):
            raise InputError(
                f"cell {cell!r} in the {role} column is not a number",
                remedy="repair the cell (no units or text inside number columns) or delete the row",
                path=path,
                line=line_no,
                column=col.name or col.position,
            )
    raise InputError(
        f"the row {text!r} cannot be read as numbers",
        remedy="repair the row or delete it",
        path=path,
        line=line_no,
    )
