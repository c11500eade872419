"""Rows that numpy's plain parser does not take, parsed by pandas (imported only here):
files larger than the first read, numbers written with thousands commas or SI prefixes,
and rows with text, blanks or a wrong number of cells among the numbers.

The rows are parsed in one vectorised pass; only when a number column holds text are
the rows looked at one by one, to skip repeated headers and comments and to name a bad
line.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd

from fitkit.errors import InputError
from fitkit.readers.cells import (
    COMMENT,
    GROUP_COMMA,
    PREFIX_EXPONENTS,
    PREFIXED,
    is_number,
)
from fitkit.readers.roles import Plan
from fitkit.readers.text import read_all, split_lines
from fitkit.readers.tidy import line_list


def parse_rows(path: Path, dialect, plan: Plan, notes: list):
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


def _read_csv(path: Path, dialect, notes: list, **kwargs) -> pd.DataFrame:
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


def _ragged(exc: Exception, path: Path, dialect) -> InputError:
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
    raw = split_lines(read_all(path, dialect.encoding))
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
        if text.startswith(COMMENT):
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
        not is_number(str(c), dialect.decimal) for c in row.dropna().tolist()
    ):
        raise InputError(
            f"a second header {text!r} differs from the first (mixed units?)",
            remedy="split the file where the header changes, or convert it to one unit",
            path=path,
            line=line_no,
        )
    for role, (col, _) in plan.roles.items():
        cell = row[col.position - 1]
        if isinstance(cell, str) and not is_number(cell, dialect.decimal):
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
        column = column.str.replace(GROUP_COMMA, "", regex=True)
    numbers = pd.to_numeric(column, errors="coerce")
    parts = column.str.fullmatch(PREFIXED.pattern)
    if parts.any():
        found = column[parts.fillna(False)].str.extract(PREFIXED.pattern)
        exponent = found[1].map(PREFIX_EXPONENTS).to_numpy()
        value = pd.to_numeric(found[0]).to_numpy()
        # one correctly rounded step from the cell: 681.8m is 681.8 / 1000 exactly rounded
        scaled = np.where(
            exponent > 0, value * 10.0 ** np.abs(exponent), value / 10.0 ** np.abs(exponent)
        )
        scaled = pd.Series(scaled, index=found.index)
        numbers = numbers.where(~parts.fillna(False), scaled)
    return numbers
