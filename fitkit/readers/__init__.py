"""Readers: sweep files to :class:`fitkit.sweep.Sweep`; they know nothing about circuits.

:func:`read_sweep` picks the reader by the file: Touchstone (``.s1p``, ``.s2p``, ``.ts``,
or text that opens with a Touchstone option line or ``[Version]``) or a delimited text
table (anything else). :func:`inspect_sweep` also says how the file was read.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from fitkit.errors import InputError
from fitkit.readers.layout import ColumnInfo, Reading
from fitkit.readers.table import read_table
from fitkit.readers.text import read_head
from fitkit.readers.touchstone import looks_like_touchstone, read_touchstone, write_touchstone
from fitkit.sweep import Sweep

__all__ = ["ColumnInfo", "Reading", "inspect_sweep", "read_sweep", "write_touchstone"]


def read_sweep(
    path: str | Path,
    *,
    columns: dict | None = None,
    parameter: str | None = None,
    duplicates: str = "average",
) -> Sweep:
    """Read a sweep file as the instrument wrote it.

    Parameters
    ----------
    path : str or Path
        A delimited text table (comma, semicolon, tab or spaces; decimal point or
        comma; UTF-8, UTF-16 or Latin-1) with a header naming the columns and their
        units, or a Touchstone file (v1.x or v2.0, one- or two-port).
    columns : dict, optional
        The user's word where the header is unclear or wrong. Keys are roles:
        ``"freq"``, ``"mag"`` (linear, dB or volts), ``"phase"``, ``"real"``,
        ``"imag"``, ``"sigma"`` (each point's standard deviation: in the readings'
        unit, absolute, or in % or dB, relative; see :class:`fitkit.sweep.Sweep`); each
        value names a column and optionally its unit, as

        - a header name, ``"Gain"``, or a 1-based position, ``2`` or ``"2"``;
        - ``"NAME:UNIT"``, e.g. ``"f:kHz"`` or ``"3:deg"``; ``":kHz"`` keeps the detected
          column and only sets its unit;
        - a dict ``{"column": "f", "unit": "kHz"}`` (either key may be left out).

        The key ``"kind"`` says what the values measure: ``"ratio"``, ``"volts"``,
        ``"impedance"``, ``"s11"`` or ``"s21"``. Roles left out are detected from the
        header. Units: Hz, kHz, MHz, GHz, rad/s, krad/s, Mrad/s; deg, rad; ratio, dB;
        V, Vrms, mV, uV, Vpp, mVpp, Vpk, dBV; ohm, kohm, Mohm; % (sigma only). Volts
        are stored as RMS.
        This is the ``[columns]`` table of a setup file, passed as it stands.
    parameter : str, optional
        For Touchstone: ``"s21"`` (the default for two-port files) or ``"s11"``. When
        left out, ``columns["kind"]`` is used if it names one of these.
    duplicates : {"average", "refuse"}
        A frequency written more than once is averaged (and said in the notes), or
        refused.

    Returns
    -------
    Sweep
        Frequencies ascending and unique in Hz, values in SI; ``notes`` says what
        clean-up was done, ``metadata`` what the file stated about itself.

    Raises
    ------
    InputError
        When the file is missing, unreadable, or holds no usable sweep; the message
        names the file, the line or column, and a fix.

    Examples
    --------
    >>> sweep = read_sweep("tank.csv", columns={"freq": "f:kHz", "kind": "volts"})
    ... # doctest: +SKIP
    """
    return inspect_sweep(path, columns=columns, parameter=parameter, duplicates=duplicates).sweep


def inspect_sweep(
    path: str | Path,
    *,
    columns: dict | None = None,
    parameter: str | None = None,
    duplicates: str = "average",
) -> Reading:
    """Read a sweep as :func:`read_sweep` does and say how the file was read.

    Parameters are those of :func:`read_sweep`.

    Returns
    -------
    Reading
        The sweep, the format, what was sniffed and each column's role and unit.

    Raises
    ------
    InputError
        As :func:`read_sweep`.
    """
    p = Path(path)
    _refuse_other_than_file(p)
    head = read_head(p)
    if looks_like_touchstone(p, head.head):
        if parameter is None and columns and columns.get("kind") in ("s11", "s21"):
            parameter = columns["kind"]
        return read_touchstone(p, parameter=parameter, head=head)
    if parameter is not None:
        columns = {**(columns or {}), "kind": parameter.lower()}
    return read_table(p, columns=columns, duplicates=duplicates, head=head)


def _refuse_other_than_file(p: Path) -> None:
    """Refuse a folder, a missing path or a pipe before it is opened (one ``stat``)."""
    try:
        mode = os.stat(p).st_mode
    except (FileNotFoundError, NotADirectoryError):
        raise InputError(
            "no such file", remedy="check the path to the sweep file", path=p
        ) from None
    except OSError:
        return  # opening it says why it cannot be read
    if stat.S_ISDIR(mode):
        raise InputError(
            "this is a folder, not a sweep file",
            remedy="name a file in it, or fit the whole folder with 'fitkit batch'",
            path=p,
        )
    if not stat.S_ISREG(mode):
        raise InputError(
            "this is not a regular file (a pipe or a device?)",
            remedy="save the sweep to a file first, then read that file",
            path=p,
        )
