"""What a reader found in a file, besides the sweep: for the user to check before fitting."""

from __future__ import annotations

from dataclasses import dataclass, field

from fitkit.sweep import Sweep


@dataclass(frozen=True)
class ColumnInfo:
    """One column of a table and what it was read as.

    Attributes
    ----------
    position : int
        1-based position in the row.
    name : str
        The header text ("" when the table has no header).
    role : str or None
        ``freq``, ``mag``, ``phase``, ``real``, ``imag``, or None when not used.
    unit : str or None
        The unit the column was read in.
    """

    position: int
    name: str
    role: str | None
    unit: str | None


@dataclass(frozen=True)
class Reading:
    """A sweep with an account of how its file was read.

    Attributes
    ----------
    sweep : Sweep
        The sweep, as :func:`fitkit.readers.read_sweep` returns it.
    format : str
        ``"delimited text"`` or ``"Touchstone 1.x"`` / ``"Touchstone 2.0"``.
    details : dict
        What was sniffed (delimiter, decimal mark, encoding, header line; or the
        Touchstone option line), as plain strings.
    columns : list of ColumnInfo
        The table's columns and their roles; for Touchstone, the values read.
    """

    sweep: Sweep
    format: str
    details: dict = field(default_factory=dict)
    columns: list = field(default_factory=list)
