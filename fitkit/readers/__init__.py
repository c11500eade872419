"""Readers: one module per kind of file; each returns a :class:`fitkit.sweep.Sweep`.

Readers know nothing about circuits. :func:`read_sweep` picks the reader by the file.
"""

from __future__ import annotations

from pathlib import Path

from fitkit.errors import InputError
from fitkit.readers.table import read_table
from fitkit.sweep import Sweep


def read_sweep(path: str | Path, *, columns: dict | None = None) -> Sweep:
    """Read a sweep file as the instrument wrote it.

    Parameters
    ----------
    path : str or Path
        A delimited text table with a header naming columns and units.
    columns : dict, optional
        Column overrides when the header cannot tell, e.g. ``{"freq": "f (kHz)"}``.

    Raises
    ------
    InputError
        When the file is missing, unreadable, or holds no usable sweep.
    """
    p = Path(path)
    if not p.is_file():
        raise InputError("no such file", remedy="check the path to the sweep file", path=p)
    return read_table(p, columns=columns)
