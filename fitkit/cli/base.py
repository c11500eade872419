"""The click group and the one place where library errors become exit status 2."""

from __future__ import annotations

import functools
import importlib
import sys
import warnings

import click

from fitkit.errors import FitkitError
from fitkit.names import OldNameWarning
from fitkit.version import __version__

#: each command's module and its one-line help, so that 'fitkit --help' and '--version'
#: need no command module (nor the numerical libraries they import) until one runs
COMMANDS = {
    "acquire": ("acquire_cmd", "Take a sweep with a generator and a two-channel digitiser."),
    "batch": ("batch_cmd", "Fit every sweep in INPUTS and judge each unit against a spec."),
    "drift": ("drift_cmd", "Compare a unit with its reference: what changed, and the fix."),
    "fit": ("fit_cmd", "Fit a circuit to SWEEP_FILE and print R, L, C, f0, Q and bandwidth."),
    "inspect": ("inspect_cmd", "Show what was detected in FILE: columns, units, points."),
    "plan": ("plan_cmd", "Print the Cramer-Rao bound and plan a sweep for a circuit."),
    "predict": ("predict_cmd", "Predict from a fitted circuit: tuning C, rejections, loss."),
    "report": ("report_cmd", "Write an HTML report of a sweep, a saved fit or a batch."),
    "show": ("show_cmd", "Print a saved fit, prediction or drift (JSON) as a table."),
    "simbench": ("simbench_cmd", "Run a simulated bench on this machine, to try 'acquire'."),
}


class _LazyGroup(click.Group):
    """A group whose commands are imported when asked for, not at start-up."""

    def list_commands(self, ctx) -> list:
        return sorted(COMMANDS)

    def get_command(self, ctx, name):
        if name in COMMANDS and name not in self.commands:
            importlib.import_module(f"fitkit.cli.{COMMANDS[name][0]}")  # registers it
        return super().get_command(ctx, name)

    def format_commands(self, ctx, formatter) -> None:
        rows = [(name, COMMANDS[name][1]) for name in self.list_commands(ctx)]
        with formatter.section("Commands"):
            formatter.write_dl(rows)


@click.group(cls=_LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="fitkit")
def main() -> None:
    """fitkit: R, L and C with honest uncertainties from a bench sweep of a tuned circuit.

    Run 'fitkit COMMAND --help' for each command's options.
    """


def reports_errors(func):
    """Turn a fitkit error into a plain message on stderr and exit status 2, and a note
    about an old name into one line on stderr."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("default", OldNameWarning)  # each note once
                warnings.showwarning = _note_or_warning(warnings.showwarning)
                return func(*args, **kwargs)
        except FitkitError as exc:
            click.echo(f"Error: {exc.user_text()}", err=True)
            sys.exit(exc.exit_code)

    return wrapper


def _note_or_warning(show):
    """A ``warnings.showwarning`` that prints an old-name note as ``note: ...`` and passes
    any other warning on to ``show``."""

    def note(message, category, *args, **kwargs):
        if issubclass(category, OldNameWarning):
            click.echo(f"note: {message}", err=True)
        else:
            show(message, category, *args, **kwargs)

    return note


def plot_options(func):
    """``--plot FILE`` and ``--force`` (to replace an existing plot)."""
    from fitkit.cli.checks import output_file  # (its imports wait for a command)

    func = click.option("--force", is_flag=True, help="Replace an existing plot file.")(func)
    return click.option(
        "--plot",
        "plot_path",
        type=click.Path(dir_okay=False),
        callback=output_file(".png", ".svg", ".pdf"),
        help="Write a plot (PNG; .svg and .pdf also work).",
    )(func)
