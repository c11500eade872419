"""``fitkit fit``: read a sweep, fit the circuit, print the values."""

from __future__ import annotations

import click

from fitkit.bench_file import (
    DEFAULT_NAME,
)
from fitkit.cli import checks
from fitkit.cli.base import main, plot_options, reports_errors
from fitkit.cli.read_options import columns_from_options, read_options
from fitkit.errors import InputError, refuse_overwrite
from fitkit.setups import BENCHES, DISPLAYS, REFERENCES
from fitkit.topologies import TOPOLOGIES


def _value_option(flag: str, field: str, help_text: str):
    """A bench value option, checked as the setup file's values are before any work."""
    return click.option(flag, callback=checks.bench_value(field), help=help_text)


def bench_options(func):
    """The bench setup options shared by every command that fits a sweep."""
    options = [
        click.option(
            "--setup",
            "setup_file",
            type=click.Path(dir_okay=False),
            help=f"Setup file (TOML); default: {DEFAULT_NAME} beside the sweep, if any.",
        ),
        click.option("--bench", type=click.Choice(BENCHES), help="How the sweep was taken."),
        _value_option(
            "--source-r", "source_ohm", "Generator source resistance, ohm [default: 50]."
        ),
        _value_option(
            "--sense-r",
            "sense_ohm",
            "Sense resistor of a divider, ohm (e.g. 47, 4k7). Any bench value may carry "
            "its standard uncertainty, '47+-0.5' or '47+-1%': it is carried into every "
            "fitted value's.",
        ),
        _value_option(
            "--feed-r", "feed_ohm", "Resistor feeding the circuit on an across bench, ohm."
        ),
        _value_option(
            "--probe-c",
            "probe_f",
            "Probe/input capacitance across the sense resistor (e.g. 15p).",
        ),
        click.option(
            "--ratio-ref",
            type=click.Choice(REFERENCES),
            help="Divider ratio taken against the generator's output terminal "
            "[default] or its open-circuit EMF (source resistance then in the loop).",
        ),
        _value_option(
            "--amplitude",
            "amplitude_vrms",
            "Generator amplitude for volt sweeps: '2 Vpp', '0.7 Vrms'.",
        ),
        click.option(
            "--display",
            type=click.Choice(DISPLAYS),
            help="Generator display assumes a matched 50 ohm load (shows half the EMF) "
            "[default], or shows the open-circuit EMF.",
        ),
        _value_option("--z0", "z0_ohm", "Reference impedance of S-parameters, ohm [default: 50]."),
        _value_option(
            "--reading-gain",
            "reading_gain",
            "The reading's calibration as a factor, with its uncertainty: '1+-2%' for two "
            "scope channels through probes [default: 1, exact].",
        ),
        click.option(
            "--relative/--calibrated",
            default=None,
            help="The ratio's scale is not calibrated (only its shape counts).",
        ),
        click.option(
            "--known",
            multiple=True,
            metavar="NAME=VALUE",
            callback=checks.known,
            help="A value measured otherwise, e.g. L=100u or L=100u+-0.5u (LCR meter).",
        ),
    ]
    for option in reversed(options):
        func = option(func)
    return func


model_option = click.option(
    "--model",
    type=click.Choice(["auto", *TOPOLOGIES]),
    default="auto",
    show_default=True,
    help="Circuit model: series R-L-C, tank (coil with loss across C), coil (with "
    "self-capacitance, in series with C), each also with -sqrtf (its loss growing as "
    "R_dc + k sqrt(f)), or auto: fit each, keep the best by BIC.",
)


def overrides_from_options(opts: dict) -> dict:
    """Setup fields from the bench options as typed (``None`` where not given)."""
    return {
        "bench": opts.get("bench"),
        "source_ohm": opts.get("source_r"),
        "sense_ohm": opts.get("sense_r"),
        "feed_ohm": opts.get("feed_r"),
        "probe_f": opts.get("probe_c"),
        "reference": opts.get("ratio_ref"),
        "amplitude_vrms": opts.get("amplitude"),
        "display": opts.get("display"),
        "z0_ohm": opts.get("z0"),
        "relative": opts.get("relative"),
        "reading_gain": opts.get("reading_gain"),
    }


@main.command("fit")
@click.argument("sweep_file", type=click.Path(dir_okay=False))
@bench_options
@read_options
@click.option(
    "--noise",
    callback=checks.noise,
    help="Noise model: auto [default: each point's own sigma when the file has a sigma "
    "column, else even or in proportion to the reading, as the data say, level "
    "estimated], column (the sigma column, required), estimate (ignore a sigma column), "
    "additive, relative, or a stated level: '0.05dB', '0.05dB,0.3deg', '1%' or an "
    "additive '2e-3'.",
)
@model_option
@click.option("--keep-outliers", is_flag=True, help="Do not refit without outlying points.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of a table.")
@plot_options
@reports_errors
def fit_command(sweep_file, noise, model, keep_outliers, as_json, plot_path, force, **opts):
    """Fit a circuit to SWEEP_FILE and print R, L, C, f0, Q and bandwidth.

    The model is a series R-L-C, a parallel tank or a coil with self-capacitance
    (--model; by default each is tried and the best by BIC is kept, with the reason).

    Every value comes with its standard uncertainty; values the sweep cannot determine
    are named, with what would determine them. Exit status 2 on bad input or a failed fit.
    """
    from fitkit.report.table import fit_table  # the fit's libraries load when it runs
    from fitkit.workflow import fit_file

    if plot_path:
        refuse_overwrite(plot_path, "plot", force)
    if sweep_file.lower().endswith(".json"):
        raise InputError(
            "this is a saved result (JSON), not a sweep",
            remedy=f"print it with 'fitkit show {sweep_file}', or fit the sweep it came from",
            path=sweep_file,
        )
    fit, bench_path = fit_file(
        sweep_file,
        setup_path=opts.pop("setup_file"),
        overrides=overrides_from_options(opts),
        known=opts.get("known", ()),
        noise=noise,
        keep_outliers=keep_outliers,
        topology=model,
        columns=columns_from_options(**opts),
    )
    if plot_path:
        from fitkit.report.plots import plot_fit

        plot_fit(fit, plot_path)
    if as_json:
        click.echo(fit.to_json())
        return
    click.echo(fit_table(fit))
    if bench_path:
        click.echo(f"  setup    read from {bench_path}")
    if plot_path:
        click.echo(f"  plot     written to {plot_path}")
