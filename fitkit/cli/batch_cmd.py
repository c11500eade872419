"""``fitkit batch``: fit many sweeps, judge them against a specification, keep everything."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from fitkit.batch import (
    FAILED,
    RESULTS_CSV,
    RESULTS_JSON,
    check_output,
    find_inputs,
    run_batch,
    summarise,
    write_results,
)
from fitkit.cli import checks
from fitkit.cli.base import main, reports_errors
from fitkit.cli.fit_cmd import bench_options, model_option, overrides_from_options
from fitkit.result import QUANTITIES
from fitkit.spec import RULES, load_spec


@main.command("batch")
@click.argument("inputs", nargs=-1, required=True)
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False),
    help="Folder for the results (made if missing).",
)
@click.option("--spec", "spec_file", type=click.Path(dir_okay=False), help="Specification (TOML).")
@click.option(
    "--rule", type=click.Choice(RULES), help="Decision rule [default: the spec's, else guarded]."
)
@click.option(
    "--coverage",
    type=click.FloatRange(min=0),
    callback=checks.finite,
    help="Guard band in standard uncertainties, k [default: 2].",
)
@bench_options
@model_option
@click.option(
    "--noise", callback=checks.noise, help="Stated noise for every sweep (as for 'fitkit fit')."
)
@click.option(
    "--workers", type=click.IntRange(min=0), default=0, help="Worker processes; 0 = one per core."
)
@click.option(
    "--resume",
    is_flag=True,
    help="Continue an earlier batch in --out; finished files are not refitted.",
)
@click.option(
    "--force", is_flag=True, help="Fit everything again and replace existing results in --out."
)
@click.option("--report", "with_report", is_flag=True, help="Also write report.html in --out.")
@reports_errors
def batch_command(
    inputs,
    out_dir,
    spec_file,
    rule,
    coverage,
    model,
    noise,
    workers,
    resume,
    force,
    with_report,
    **opts,
):
    """Fit every sweep in INPUTS (folders, files or quoted globs) and judge each unit.

    A setup file beside each sweep (fitkit-setup.toml) is used unless --setup is given.
    Writes results.csv and results.json to --out: one row per input with values,
    uncertainties and verdicts (pass, fail, undecided), the reason for any file that could
    not be read or fitted, batch statistics and the units that stand out. Exit status 0
    when every file was processed (whatever the verdicts), 2 on bad inputs.
    """
    if resume and force:
        raise click.UsageError(
            "--resume keeps finished fits and --force replaces them; give one of the two"
        )
    out = Path(out_dir)
    spec = load_spec(spec_file).with_rule(rule, coverage) if spec_file else None
    files = find_inputs(inputs, skip=out)
    names = (RESULTS_CSV, RESULTS_JSON) + (("report.html",) if with_report else ())
    check_output(out, resume=resume, force=force, names=names)
    settings = fit_settings(opts, noise, model)
    with click.progressbar(length=len(files), label="fitting", file=sys.stderr) as bar:
        try:
            records = run_batch(
                files,
                settings,
                out,
                workers=workers,
                resume=resume,
                on_done=lambda r: bar.update(1),
            )
        except KeyboardInterrupt:
            click.echo(
                f"\ninterrupted; finished fits are kept in {out}; run again with --resume", err=True
            )
            sys.exit(130)
    summary = summarise(records, spec)
    written = write_results(out, summary, settings)
    if with_report:
        from fitkit.report.html import write_batch_report

        written.append(write_batch_report(out, summary, settings))
    for line in summary_lines(summary, records):
        click.echo(line)
    for path in written:
        click.echo(f"  written  {path}")


def fit_settings(opts: dict, noise: str | None, model: str = "auto") -> dict:
    """The settings for :func:`fitkit.batch.fit_with` from the bench options, --noise and
    --model."""
    return {
        "topology": model,
        "setup_path": opts.pop("setup_file"),
        "overrides": overrides_from_options(opts),
        "known": list(opts.get("known", ())),
        "noise": noise,
    }


def summary_lines(summary: dict, records: list[dict]) -> list[str]:
    """What ``fitkit batch`` prints: counts, the rule, failures and stand-out units."""
    counts = ", ".join(f"{n} {word}" for word, n in sorted(summary["counts"].items()))
    lines = [f"{len(records)} file(s): {counts}", f"  rule     {summary['rule']}"]
    for record in records:
        if record["status"] == FAILED:
            lines.append(f"  not fitted: {record['reason'].splitlines()[0]}")
    for row in summary["rows"]:
        if row["verdict"] in ("fail", "undecided"):
            why = [
                f"{k[:-8]} {v}" for k, v in row.items() if k.endswith("_verdict") and v != "pass"
            ]
            lines.append(f"  {row['verdict']:<9} {row['file']}: {'; '.join(why)}")
    for item in summary["stand_out"]:
        label = QUANTITIES.get(item["value"], (None, item["value"]))[1]
        lines.append(f"  stands out: {item['file']}: {label} (z = {item['z']:+.1f})")
    return lines
