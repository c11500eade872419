"""``fitkit report``: one self-contained HTML page for a fit or for a batch folder."""

from __future__ import annotations

import json
from pathlib import Path

import click

from fitkit.batch import RESULTS_JSON, fit_with
from fitkit.cli import checks
from fitkit.cli.base import main, reports_errors
from fitkit.cli.batch_cmd import fit_settings
from fitkit.cli.fit_cmd import bench_options
from fitkit.errors import InputError, refuse_overwrite
from fitkit.report.html import batch_plots, batch_report, fit_report, write_report
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
@bench_options
@click.option("--noise", callback=checks.noise, help="Stated noise (as for 'fitkit fit').")
@click.option("--force", is_flag=True, help="Replace an existing report file.")
@reports_errors
def report_command(source, out_file, spec_file, noise, force, **opts):
    """Write an HTML report of SOURCE: a sweep file, a saved fit (JSON), or a batch folder.

    One file with the plots embedded: values with uncertainties, verdicts against --spec,
    the setup, the fitkit version and the input checksums. A batch folder (made by
    'fitkit batch --out DIR') keeps its own verdicts; its units are refitted to draw plots.
    """
    refuse_overwrite(out_file, "report", force)
    src = Path(source)
    if src.is_dir():
        page = _batch_page(src)
    else:
        spec = load_spec(spec_file) if spec_file else None
        if src.suffix.lower() == ".json":
            fit, bench = load_fit(src), None
        else:
            fit, bench = fit_with(src, fit_settings(opts, noise))
        page = fit_report(fit, spec=spec, setup_file=bench)
    click.echo(f"report written to {write_report(out_file, page, force=force)}")


def _batch_page(folder: Path) -> str:
    path = folder / RESULTS_JSON
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
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
