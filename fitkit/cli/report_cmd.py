"""``fitkit report``: one self-contained HTML page for a fit or for a batch folder."""

from __future__ import annotations

from pathlib import Path

import click

from fitkit.batch import RESULTS_JSON, fit_with
from fitkit.batch_results import load_results
from fitkit.cli import checks
from fitkit.cli.base import main, reports_errors
from fitkit.cli.batch_cmd import fit_settings
from fitkit.cli.fit_cmd import bench_options
from fitkit.errors import InputError, refuse_overwrite
from fitkit.report.batch_page import batch_plots, batch_report
from fitkit.report.drift_page import diagnose, drift_report
from fitkit.report.html import fit_report, write_report
from fitkit.result import load_fit
from fitkit.spec import load_spec


@main.command("report")
@click.argument("source", type=click.Path())
@click.option(
    "--out",
    "out_file",
    required=True,
    type=click.Path(dir_okay=False),
    callback=checks.output_file(".html", ".htm"),
    help="HTML file to write.",
)
@click.option("--spec", "spec_file", type=click.Path(dir_okay=False), help="Judge the values.")
@click.option(
    "--against",
    "reference",
    help="A drift page: compare SOURCE with this reference (an earlier fit or a sweep).",
)
@bench_options
@click.option("--noise", callback=checks.noise, help="Stated noise (as for 'fitkit fit').")
@click.option("--force", is_flag=True, help="Replace an existing report file.")
@reports_errors
def report_command(source, out_file, spec_file, reference, noise, force, **opts):
    """Write an HTML report of SOURCE: a sweep file, a saved fit (JSON), or a batch folder.

    One file with the plots embedded: values with uncertainties, verdicts against --spec,
    the setup, the fitkit version and the input checksums. A batch folder (made by
    'fitkit batch --out DIR') keeps its own verdicts; its units are refitted to draw plots.
    With --against, a drift page: both sweeps overlaid, the changes and the reading.
    """
    refuse_overwrite(out_file, "report", force)
    src = Path(source)
    if reference and (spec_file or src.is_dir()):
        raise InputError(
            "--against makes a drift page of one unit; it takes no --spec and no batch folder",
            remedy="give a sweep or a saved fit as SOURCE, and leave out --spec",
        )
    settings = fit_settings(opts, noise)
    if src.is_dir():
        page = _batch_page(src)
    elif reference:
        unit, ref = _fit_of(src, settings)[0], _fit_of(Path(reference), settings)[0]
        page = drift_report(unit, ref, diagnose(unit, ref))
    else:
        spec = load_spec(spec_file) if spec_file else None
        fit, bench = _fit_of(src, settings)
        page = fit_report(fit, spec=spec, setup_file=bench)
    click.echo(f"report written to {write_report(out_file, page, force=force)}")


def _fit_of(path: Path, settings: dict) -> tuple:
    """(fit, setup file) of a saved fit (.json) or of a sweep fitted now."""
    if path.suffix.lower() == ".json":
        return load_fit(path), None
    return fit_with(path, settings)


def _batch_page(folder: Path) -> str:
    path = folder / RESULTS_JSON
    try:
        data = load_results(folder)
        return batch_report(data, data["settings"], batch_plots(data["rows"], data["settings"]))
    except FileNotFoundError:
        raise InputError(
            "no batch results here",
            remedy="give a folder made by 'fitkit batch --out DIR', a sweep, or a saved fit",
            path=path,
        ) from None
    except (ValueError, KeyError) as exc:
        raise InputError(
            f"not a fitkit batch results file ({exc})",
            remedy="run 'fitkit batch ... --out DIR --force' again to remake it",
            path=path,
        ) from None
