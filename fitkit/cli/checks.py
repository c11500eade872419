"""Click callbacks that check option values before a command does any work.

Each turns a bad value into click's usage error (exit status 2) naming the option and
the fix, so a batch with a bad ``--sense-r`` or ``--noise`` is refused at once instead of
marking every unit "not fitted".
"""

from __future__ import annotations

import math
from pathlib import Path

import click

from fitkit.bench_file import check_override, known_values
from fitkit.errors import FitkitError
from fitkit.noise import parse_noise
from fitkit.sweep import Sweep

#: A stand-in sweep with phase and per-point sigmas, so that every accepted form of
#: --noise can be checked.
_PROBE = Sweep([1.0, 2.0], [1.0 + 0.0j, 1.0 + 0.0j], "ratio", source="--noise", sigma=[1e-3, 1e-3])


def _bad(exc: FitkitError, ctx, param) -> click.BadParameter:
    text = exc.message + (f"; fix: {exc.remedy}" if exc.remedy else "")
    return click.BadParameter(text, ctx=ctx, param=param)


def _calling(check_value, doc: str):
    """A callback that runs ``check_value`` on a given value and turns a fitkit error
    into click's usage error naming the option."""

    def callback(ctx, param, value):
        if value is not None:
            try:
                check_value(value)
            except FitkitError as exc:
                raise _bad(exc, ctx, param) from None
        return value

    callback.__doc__ = doc
    return callback


def bench_value(field: str):
    """A callback checking a bench value (``sense_ohm``, ...) as the setup file's are."""
    return _calling(lambda value: check_override(field, value), bench_value.__doc__)


known = _calling(
    lambda values: known_values(None, values), "``--known NAME=VALUE``: readable, each once."
)
noise = _calling(
    lambda value: parse_noise(value, _PROBE), "``--noise``: a form ``fitkit fit --help`` lists."
)


def finite(ctx, param, value):
    """A number option that must be finite (click's FloatRange lets nan and inf through)."""
    if value is not None and not math.isfinite(value):
        raise click.BadParameter(
            f"{value} is not a finite number; fix: give a plain number, e.g. 2",
            ctx=ctx,
            param=param,
        )
    return value


def output_file(*suffixes: str):
    """A callback for a file to write: its folder must exist, its name end in a suffix."""

    def check(ctx, param, value):
        if value is None:
            return value
        path = Path(value)
        if not path.name or path.name in (".", ".."):
            raise click.BadParameter(
                f"{value!r} is not a file name; fix: give one, e.g. 'result{suffixes[0]}'",
                ctx=ctx,
                param=param,
            )
        if path.suffix.lower() not in suffixes:
            raise click.BadParameter(
                f"{value!r} does not end in {' or '.join(suffixes)}; fix: name the file "
                f"e.g. {path.with_suffix(suffixes[0]).name!r}",
                ctx=ctx,
                param=param,
            )
        folder = path.parent
        if not folder.is_dir():
            raise click.BadParameter(
                f"the folder {str(folder)!r} does not exist; fix: make it first "
                f"(mkdir -p {folder}) or write elsewhere",
                ctx=ctx,
                param=param,
            )
        return value

    return check
