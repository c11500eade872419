"""``fitkit batch``: fit many sweeps, judge them against a specification, keep everything."""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable, Iterator
from pathlib import Path

import click

from fitkit.batch import Stop, run_batch
from fitkit.batch_inputs import find_inputs
from fitkit.batch_output import (
    RESULTS_CSV,
    RESULTS_JSON,
    RESULTS_READABLE,
    check_output,
    command_line,
    output_folder,
)
from fitkit.batch_results import Tally, load_results, write_results
from fitkit.cli import checks
from fitkit.cli.base import main, reports_errors
from fitkit.cli.fit_cmd import bench_options, model_option, overrides_from_options
from fitkit.errors import InputError
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
    Writes results.csv (SI), results-readable.csv (with units) and results.json to --out:
    one row per input path with values, uncertainties and verdicts (pass, fail,
    undecided), the reason for any file that could not be read or fitted, fit warnings,
    doubtful values, identical files, batch statistics and the units that stand out. One
    batch at a time per --out. Exit status 0 when every file was processed (whatever the
    verdicts), 2 on bad inputs or an output folder that is in use or cannot be written.
    """
    if resume and force:
        raise InputError(
            "--resume keeps finished fits and --force fits everything again",
            remedy="give one of --resume and --force",
        )
    out = Path(out_dir)
    spec = load_spec(spec_file).with_rule(rule, coverage) if spec_file else None
    found = find_inputs(inputs, skip=out)
    names = (RESULTS_CSV, RESULTS_READABLE, RESULTS_JSON) + (("report.html",) * with_report)
    settings = fit_settings(opts, noise, model)
    with output_folder(out, command_line()):
        check_output(out, resume=resume, force=force, names=names)
        with Stop() as stop:
            try:
                tally = Tally(found, spec)
                with progress(len(found.files)) as tick:
                    run_batch(found, settings, out, workers=workers, resume=resume,
                              on_done=tick, on_record=tally.add)  # fmt: skip
                summary = tally.summary(out)
                written = write_results(out, found, spec, summary, settings)
                if with_report:
                    from fitkit.report.batch_page import write_batch_report

                    results = load_results(out)
                    written.append(write_batch_report(out, results, settings, spec))
            except KeyboardInterrupt:
                click.echo(
                    f"\nstopped; finished fits are kept in {out}; run again with --resume",
                    err=True,
                )
                sys.exit(128 + stop.signum)
    for line in summary_lines(summary, len(found.files)):
        click.echo(line)
    for path in written:
        click.echo(f"  written  {path}")


@contextlib.contextmanager
def progress(total: int) -> Iterator[Callable[[str], None]]:
    """A progress bar on stderr when stderr is a terminal; otherwise nothing is drawn."""
    if not sys.stderr.isatty():
        yield lambda status: None
        return
    with click.progressbar(length=total, label="fitting", file=sys.stderr) as bar:
        yield lambda status: bar.update(1)


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


#: how the summary labels each kind of note, in the order they are printed
_NOTE_LABELS = {
    "not fitted": "not fitted:",
    "fail": "fail     ",
    "undecided": "undecided",
    "warnings": "warning  ",
    "doubtful": "doubtful ",
}


def shown(file: str) -> str:
    """A file name fit for one line of output (a newline in it shows as ``\\n``)."""
    return file if file.isprintable() else file.encode("unicode_escape").decode("ascii")


def summary_lines(summary: dict, total: int) -> list[str]:
    """What ``fitkit batch`` prints: counts, the rule, marks, then per unit what is not
    a plain pass (not fitted, fail, undecided, fit warnings, doubtful values), identical
    files, stand-out values and folders not searched."""
    counts = ", ".join(f"{n} {word}" for word, n in sorted(summary["counts"].items()))
    lines = [f"{total} file(s): {counts}", f"  rule     {summary['rule']}"]
    marks = [f"{n} with {what}" for what, n in summary["marks"].items() if n]
    if marks:
        lines.append(f"  marks    {', '.join(marks)}")
    for kind, label in _NOTE_LABELS.items():
        for note in summary["notes"]:
            if note["kind"] == kind:
                lines.append(f"  {label} {shown(note['file'])}: {note['text']}")
    for group in summary["same_bytes"]:
        names = ", ".join(shown(f) for f in group)
        lines.append(f"  same bytes: {names} (identical files; each fitted and listed)")
    for item in summary["stand_out"]:
        label = QUANTITIES.get(item["value"], (None, item["value"]))[1]
        lines.append(f"  stands out: {shown(item['file'])}: {label} (z = {item['z']:+.1f})")
    for line in summary["skipped"]:
        lines.append(f"  skipped  {shown(line)}")
    return lines
