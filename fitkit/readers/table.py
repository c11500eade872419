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
from fitkit.readers.text import read_all, read_head
from fitkit.readers.tidy import line_list, tidy_sweep

_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?|[-+]?(?:nan|inf)", re.I)
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

    def describe(self) -> dict:
        return {
            "delimiter": _DELIMITER_NAMES[self.delimiter],
            "decimal mark": "comma" if self.decimal == "," else "point",
            "encoding": self.encoding,
            "header": f"line {self.header_line}" if self.header_line else "none",
            "data from": f"line {self.first_data_line}",
        }


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
    freq, values = plan.values(cells)
    del cells  # frees the parser's block before the clean-up makes its own arrays
    freq_col = plan.roles["freq"][0]
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
    )
    used = {col.position: (role, unit.text) for role, (col, unit) in plan.roles.items()}
    infos = [ColumnInfo(c.position, c.name, *used.get(c.position, (None, None))) for c in header]
    return Reading(sweep=sweep, format="delimited text", details=dialect.describe(), columns=infos)


def _split(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    return [c.strip() for c in next(csv.reader([line], delimiter=delimiter))]


def _is_number(cell: str, decimal: str) -> bool:
    cell = cell.strip().strip('"')
    if decimal == ",":
        if "." in cell:
            return False
        cell = cell.replace(",", ".")
    return bool(_NUMBER.fullmatch(cell))


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
    header = [describe_column(i + 1, n) for i, n in enumerate(names)]
    preamble = lines[: header_index if header_index is not None else first]
    return Dialect(
        delimiter=delimiter,
        decimal=decimal,
        encoding=encoding,
        header_line=None if header_index is None else header_index + 1,
        first_data_line=first + 1,
        fields=max(fields, len(_split(lines[first], delimiter))),
        header=header,
        metadata=_metadata(preamble, delimiter),
    )


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
    encoding = dialect.encoding
    for attempt in ("fast", "retry"):
        try:
            frame = pd.read_csv(
                path,
                encoding=encoding,
                dtype={i: np.float64 for i in wanted.values()},
                **kwargs,
            )
            break
        except UnicodeDecodeError:
            if attempt == "retry" or encoding != "utf-8":
                raise InputError(
                    f"the file is not valid {encoding} text past its first lines",
                    remedy="export the sweep again as plain text (UTF-8)",
                    path=path,
                ) from None
            encoding = dialect.encoding = "latin-1"
            notes.append("not valid UTF-8; decoded as Latin-1")
        except pd.errors.ParserError as exc:
            raise _ragged(exc, path, dialect) from None
        except ValueError:
            return _parse_rows_slowly(path, dialect, plan, wanted, kwargs, notes)
    cells = {role: frame[i].to_numpy(dtype=np.float64) for role, i in wanted.items()}
    return cells, dialect.first_data_line


def _ragged(exc: Exception, path: Path, dialect: Dialect) -> InputError:
    m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(exc))
    if not m:
        return InputError(
            f"the table cannot be parsed ({exc})",
            remedy="check the rows for stray delimiters or quotes",
            path=path,
        )
    return InputError(
        f"the row has {m.group(3)} cells where the table has {m.group(1)}",
        remedy="repair the row (a stray delimiter?) or delete it",
        path=path,
        line=int(m.group(2)),
    )


def _parse_rows_slowly(path, dialect, plan, wanted, kwargs, notes):
    """Rows with text in a number column: skip repeated headers and comments, else refuse."""
    frame = pd.read_csv(path, encoding=dialect.encoding, dtype=str, skipinitialspace=True, **kwargs)
    raw = _LINE_BREAK.split(read_all(path, dialect.encoding))
    first = dialect.first_data_line
    header_text = raw[dialect.header_line - 1].strip() if dialect.header_line else None
    cells: dict[str, np.ndarray] = {}
    text_rows = np.zeros(len(frame), dtype=bool)
    for role, i in wanted.items():
        column = frame[i]
        if dialect.decimal == ",":
            column = column.str.replace(",", ".", regex=False)
        numbers = pd.to_numeric(column, errors="coerce")
        text_rows |= (column.notna() & numbers.isna()).to_numpy()
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
