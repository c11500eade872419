"""Command-line options that tell the readers which column is which, when a header cannot.

The options fill the same dict as a setup file's ``[columns]`` table; see
:func:`fitkit.readers.read_sweep` for its format.
"""

from __future__ import annotations

import click

from fitkit.readers.columns import ROLES
from fitkit.sweep import KINDS


def _check_column(ctx, param, values: tuple[str, ...]) -> tuple[str, ...]:
    for value in values:
        role, sep, spec = value.partition("=")
        if not sep or role.strip() not in ROLES or not spec.strip():
            raise click.BadParameter(
                f"{value!r} is not ROLE=COLUMN[:UNIT] with ROLE one of {', '.join(ROLES)} "
                "(e.g. freq=1:kHz, mag='Vout:mVpp', phase=:rad)",
                ctx=ctx,
                param=param,
            )
    return values


def read_options(func):
    """Add ``--column ROLE=COLUMN[:UNIT]`` (repeatable) and ``--measures KIND`` to a command.

    Pass the command's keyword arguments to :func:`columns_from_options`.
    """
    func = click.option(
        "--measures",
        type=click.Choice(KINDS, case_sensitive=False),
        help="What the values are, when the header does not say; for Touchstone, "
        "s11 or s21 picks the parameter.",
    )(func)
    return click.option(
        "--column",
        "column",
        multiple=True,
        metavar="ROLE=COLUMN[:UNIT]",
        callback=_check_column,
        help="Which column gives a role (freq, mag, phase, real, imag, sigma: each point's "
        "standard deviation), by header name or position from 1, with an optional unit; "
        "':UNIT' alone sets only the unit. "
        "Repeat for each role, e.g. --column freq=1:kHz --column mag=Gain:dB.",
    )(func)


def columns_from_options(**kwargs) -> dict | None:
    """The ``columns=`` dict for :func:`fitkit.readers.read_sweep` from the read options.

    Parameters
    ----------
    **kwargs
        The command's keyword arguments; ``column`` and ``measures`` are used, the rest
        ignored.

    Returns
    -------
    dict or None
        None when no override was given.

    Examples
    --------
    >>> columns_from_options(column=("freq=1:kHz", "mag=Gain"), measures="volts")
    {'freq': '1:kHz', 'mag': 'Gain', 'kind': 'volts'}
    """
    out: dict = {}
    for value in kwargs.get("column") or ():
        role, _, spec = value.partition("=")
        out[role.strip()] = spec.strip()
    if kwargs.get("measures"):
        out["kind"] = kwargs["measures"].lower()
    return out or None
