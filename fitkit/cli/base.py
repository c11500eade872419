"""The click group and the one place where library errors become exit status 2."""

from __future__ import annotations

import functools
import sys

import click

from fitkit import __version__
from fitkit.cli.checks import output_file
from fitkit.errors import FitkitError


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="fitkit")
def main() -> None:
    """fitkit: R, L and C with honest uncertainties from a bench sweep of a tuned circuit.

    Run 'fitkit COMMAND --help' for each command's options.
    """


def reports_errors(func):
    """Turn a fitkit error into a plain message on stderr and exit status 2."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except FitkitError as exc:
            click.echo(f"Error: {exc.user_text()}", err=True)
            sys.exit(exc.exit_code)

    return wrapper


def plot_options(func):
    """``--plot FILE`` and ``--force`` (to replace an existing plot)."""
    func = click.option("--force", is_flag=True, help="Replace an existing plot file.")(func)
    return click.option(
        "--plot",
        "plot_path",
        type=click.Path(dir_okay=False),
        callback=output_file(".png", ".svg", ".pdf"),
        help="Write a plot (PNG; .svg and .pdf also work).",
    )(func)
