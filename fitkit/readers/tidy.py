"""The clean-up every reader shares: drop empty rows, refuse bad numbers, sort, merge
repeated frequencies; each step said in a note with the lines it touched.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fitkit.errors import InputError
from fitkit.sweep import Sweep

DUPLICATES = ("average", "refuse")


def line_list(lines: np.ndarray, limit: int = 6) -> str:
    """'lines 14, 15' or 'lines 3, 9, 12, ... (40 in all)' for a note or message."""
    shown = ", ".join(str(int(n)) for n in lines[:limit])
    word = "line" if len(lines) == 1 else "lines"
    more = f", ... ({len(lines)} in all)" if len(lines) > limit else ""
    return f"{word} {shown}{more}"


def tidy_sweep(
    freq_hz: np.ndarray,
    values: np.ndarray,
    lines: np.ndarray | int,
    *,
    path: Path,
    kind: str,
    recorded_in_db: bool,
    metadata: dict,
    notes: list,
    duplicates: str = "average",
    freq_column: str | int | None = None,
    sha256: str | None = None,
    sigma: np.ndarray | None = None,
    sigma_relative: bool = False,
    sigma_column: str | int | None = None,
) -> Sweep:
    """Make a :class:`Sweep` from parsed columns, cleaning up and saying what was done.

    Parameters
    ----------
    freq_hz, values : ndarray
        Parsed frequencies (Hz) and measured values (SI), NaN where a cell was empty.
    lines : ndarray of int, or int
        The file line each row came from, for notes and messages; an int is the first
        row's line when the rows are consecutive lines (saves an array per row).
    duplicates : {"average", "refuse"}
        What to do with a frequency written more than once.
    sha256 : str, optional
        The file's SHA-256, carried on the Sweep.
    sigma : ndarray, optional
        Each row's own standard deviation (see :class:`fitkit.sweep.Sweep`); it follows
        its row through the clean-up, and repeated frequencies average to
        ``sqrt(sum sigma^2) / n``.
    sigma_relative : bool
        ``sigma`` is relative to the reading.
    sigma_column : str or int, optional
        The sigma column's name or position, for messages.

    Raises
    ------
    InputError
        For infinite values, zero or negative frequencies, fewer than two points, or
        repeated frequencies when ``duplicates="refuse"``.
    """
    notes = list(notes)
    if isinstance(lines, (int, np.integer)) and freq_hz.size < 2:
        lines = np.arange(freq_hz.size) + lines
    if not (np.isfinite(freq_hz).all() and np.isfinite(values).all()):
        freq_hz, values, lines, sigma = _drop_blank_rows(freq_hz, values, lines, sigma, path, notes)
    if sigma is not None:
        _refuse_bad_sigma(sigma, lines, path, sigma_column)
    _refuse_beyond_readings(freq_hz, values, lines, path, freq_column)
    if freq_hz.size < 2:
        raise InputError(
            f"the file holds {freq_hz.size} point(s) of data",
            remedy="a fit needs a sweep of many points across the resonance; if the "
            "instrument saved more, the file was cut short: export it again",
            path=path,
            line=int(lines[0]) if lines.size else None,
        )
    sigmas = {"sigma": sigma, "sigma_relative": sigma_relative}
    if (freq_hz[1:] > freq_hz[:-1]).all():  # ascending and unique, the common case
        return _sweep(freq_hz, values, path, kind, recorded_in_db, metadata, notes, sha256, sigmas)
    steps = np.diff(freq_hz)
    if (steps < 0).any():
        if (steps <= 0).all():
            notes.append("sorted a descending sweep")
        else:
            notes.append(f"sorted {int((steps < 0).sum())} out-of-order row(s)")
        order = np.argsort(freq_hz, kind="stable")
        freq_hz, values = freq_hz[order], values[order]
        sigma = None if sigma is None else sigma[order]
        lines = lines[order] if isinstance(lines, np.ndarray) else order + lines
        steps = np.diff(freq_hz)
    repeated = steps == 0
    if repeated.any():
        freq_hz, values, sigma = _merge(
            freq_hz, values, sigma, lines, repeated, duplicates, path, notes
        )
    sigmas["sigma"] = sigma
    return _sweep(freq_hz, values, path, kind, recorded_in_db, metadata, notes, sha256, sigmas)


def _drop_blank_rows(freq_hz, values, lines, sigma, path, notes) -> tuple:
    """Drop rows with a NaN (said in a note, except blank lines at the end of the file);
    refuse an infinite value."""
    empty = np.isnan(freq_hz) | np.isnan(values)
    if isinstance(lines, (int, np.integer)):
        lines = np.arange(freq_hz.size) + lines
    if empty.any():
        # blank lines at the end of a file go quietly; any row with a number in it is said
        written = np.flatnonzero(~(np.isnan(freq_hz) & np.isnan(values)))
        last = written[-1] if written.size else -1
        inner = np.flatnonzero(empty[: last + 1])
        if inner.size:
            notes.append(f"dropped {inner.size} blank/NaN row(s) ({line_list(lines[inner])})")
        freq_hz, values, lines = freq_hz[~empty], values[~empty], lines[~empty]
        sigma = None if sigma is None else sigma[~empty]
    bad = ~np.isfinite(freq_hz) | ~np.isfinite(values)
    if bad.any():
        raise InputError(
            "an infinite value (an overload or a missing reading?)",
            remedy="delete or repair the row",
            path=path,
            line=_line(lines, int(np.argmax(bad))),
        )
    return freq_hz, values, lines, sigma


def _sweep(freq_hz, values, path, kind, recorded_in_db, metadata, notes, sha256, sigmas) -> Sweep:
    return Sweep(
        freq_hz,
        values,
        kind,
        recorded_in_db=recorded_in_db,
        source=str(path),
        metadata=dict(metadata),
        notes=notes,
        sha256=sha256,
        **sigmas,
    )


def _refuse_bad_sigma(sigma: np.ndarray, lines, path: Path, column) -> None:
    """A row with a reading must give its standard deviation, finite and above zero."""
    bad = ~(np.isfinite(sigma) & (sigma > 0))
    if bad.any():
        row = int(np.argmax(bad))
        raise InputError(
            f"the per-point standard deviation {sigma[row]:g} is not a finite number above zero",
            remedy="repair the cell (every row with a reading needs its standard deviation), "
            "or delete the column to fit without per-point weights",
            path=path,
            line=_line(lines, row),
            column=column,
        )


def refuse_infinite(
    cells: dict[str, np.ndarray], lines: np.ndarray | int, columns: dict, *, path: Path
) -> None:
    """Refuse a cell written as ``inf`` or ``-inf`` before any conversion can hide it
    (``-inf`` dB would become a magnitude of 0).

    Parameters
    ----------
    cells : dict
        Role to the column's parsed numbers.
    lines : ndarray of int, or int
        The file line of each row, or the first row's line.
    columns : dict
        Role to the column's name or position, for the message.

    Raises
    ------
    InputError
        Naming the line, the column and the fix.
    """
    for role, numbers in cells.items():
        bad = np.isinf(numbers)
        if bad.any():
            row = int(np.argmax(bad))
            raise InputError(
                f"the cell holds an infinite value, {numbers[row]:g} (an overload or a missing "
                "reading?)",
                remedy="repair the cell or delete the row; fitkit does not guess a value",
                path=path,
                line=_line(lines, row),
                column=columns[role],
            )


#: No sweep instrument reaches 10 THz, and no reading in SI (volts, ohm, a ratio) comes
#: near 1e100; beyond these a unit or a column is wrong, and the fit's arithmetic would
#: overflow (its squares pass 1e308).
MAX_FREQ_HZ = 1e13
MAX_READING = 1e100


def _refuse_beyond_readings(freq_hz, values, lines, path, freq_column) -> None:
    if freq_hz.size and (freq_hz.min() <= 0 or freq_hz.max() > MAX_FREQ_HZ):
        _refuse_frequency(freq_hz, lines, path, freq_column)
    if not values.size:
        return
    parts = values.view(np.float64) if np.iscomplexobj(values) else values
    bound = max(float(parts.max()), -float(parts.min()))  # max |v| in [bound, 1.42 bound]
    if bound == 0 or 1 / MAX_READING <= bound <= MAX_READING / 2:
        return  # within the limits: no need of each |v|
    size = np.abs(values)
    largest = float(size.max())
    if largest > MAX_READING or 0 < largest < 1 / MAX_READING:
        what = "beyond 1e100" if largest > MAX_READING else "the largest, and all are below 1e-100"
        raise InputError(
            f"the reading {largest:g} is {what}: far outside anything an instrument writes",
            remedy="check the measured column's unit and that the right column is read "
            "(--column mag=NAME:UNIT)",
            path=path,
            line=_line(lines, int(np.argmax(size))),
        )


def _refuse_frequency(freq_hz, lines, path, freq_column) -> None:
    for bad, message, remedy in (
        (
            freq_hz <= 0,
            "frequency {:g} Hz is zero or negative",
            "delete the row, or check the frequency column and its unit",
        ),
        (
            freq_hz > MAX_FREQ_HZ,
            "frequency {:g} Hz is beyond any sweep instrument (above 10 THz)",
            "check the frequency column's unit (Hz, kHz, MHz, GHz) and the column",
        ),
    ):
        if bad.any():
            i = int(np.argmax(bad))
            raise InputError(
                message.format(freq_hz[i]),
                remedy=remedy,
                path=path,
                line=_line(lines, i),
                column=freq_column,
            )


def _line(lines: np.ndarray | int, row: int) -> int:
    return int(lines[row]) if isinstance(lines, np.ndarray) else lines + row


def _merge(freq_hz, values, sigma, lines, repeated, duplicates, path, notes):
    if duplicates not in DUPLICATES:
        raise InputError(
            f"unknown way {duplicates!r} to treat repeated frequencies",
            remedy=f"use one of: {', '.join(DUPLICATES)}",
            path=path,
        )
    extra = np.flatnonzero(repeated) + 1
    if not isinstance(lines, np.ndarray):
        lines = np.arange(freq_hz.size) + lines
    if duplicates == "refuse":
        raise InputError(
            f"frequency {freq_hz[extra[0]]:g} Hz is written more than once",
            remedy="delete the repeated rows, or let fitkit average them",
            path=path,
            line=int(lines[extra[0]]),
        )
    unique, start = np.unique(freq_hz, return_index=True)
    counts = np.diff(np.append(start, freq_hz.size))
    sums = np.add.reduceat(values, start)
    notes.append(
        f"merged {int((counts > 1).sum())} repeated frequencies (averaged; "
        f"{line_list(lines[extra])})"
    )
    if sigma is not None:  # the standard deviation of a mean of independent readings
        sigma = np.sqrt(np.add.reduceat(sigma**2, start)) / counts
    return unique, sums / counts, sigma
