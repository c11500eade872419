"""``fitkit show``: print a saved fit, prediction or drift diagnosis as its command would."""

from __future__ import annotations

import click

from fitkit.cli.base import main, reports_errors
from fitkit.report.saved import prediction_from_dict, read_saved
from fitkit.report.table import drift_table, fit_table
from fitkit.result import CircuitFit


@main.command("show")
@click.argument("saved_file", type=click.Path(dir_okay=False))
@reports_errors
def show_command(saved_file):
    """Print SAVED_FILE (JSON from fit, predict or drift with --json) as a table.

    The table is the one the command printed when it made the file. Exit status 2 when
    the file is not a result fitkit saved.
    """
    kind, data = read_saved(saved_file)
    if kind == "fit":
        click.echo(fit_table(CircuitFit.from_dict(data, saved_file)))
    elif kind == "prediction":
        from fitkit.cli.predict_cmd import prediction_table

        prediction = prediction_from_dict(data, saved_file)
        click.echo(prediction_table(prediction, data.get("source", saved_file)))
    else:
        click.echo(drift_table(data))
