"""``fitkit simbench``: a simulated generator and digitiser on this computer's loopback."""

from __future__ import annotations

import sys
import time

import click

from fitkit.cli.base import main, reports_errors


@main.command("simbench")
@click.option(
    "--circuit",
    type=click.Choice(["series", "tank", "coil"]),
    default="series",
    show_default=True,
    help="The circuit on the simulated bench.",
)
@click.option(
    "--noise", default="10m", show_default=True, help="RMS noise per sample on each channel, volts."
)
@click.option(
    "--drift", default=0.0, show_default=True, help="Drift of C, parts per million per second."
)
@click.option(
    "--skew",
    default="0",
    show_default=True,
    help="Delay of the output channel behind the input channel, seconds (e.g. 20n).",
)
@click.option(
    "--tilt",
    default=0.0,
    show_default=True,
    help="Gain error of the output channel, dB per decade from 1 MHz.",
)
@click.option("--seed", default=1, show_default=True, help="Seed of the noise.")
@click.option(
    "--seconds",
    type=click.FloatRange(min=0),
    help="Stop after this many seconds [default: run until Ctrl-C].",
)
@reports_errors
def simbench_command(circuit, noise, drift, skew, tilt, seed, seconds):
    """Run a simulated generator and two-channel digitiser, to try 'fitkit acquire'.

    Both speak SCPI over TCP on 127.0.0.1 (this computer only) at the addresses
    printed; the circuit behind them, the noise and the bench imperfections are set by
    the options. Stop it with Ctrl-C.
    """
    from fitkit.instruments.bench_model import SCENARIOS, scenario_model
    from fitkit.instruments.simbench import SimulatedBench
    from fitkit.units import parse_quantity

    model = scenario_model(
        circuit,
        noise_v=parse_quantity(noise, "V", what="noise"),
        drift_per_s=drift * 1e-6,
        delay_s=parse_quantity(skew, "s", what="skew"),
        tilt_db_per_decade=tilt,
        seed=seed,
    )
    text, _, (start, stop) = SCENARIOS[circuit]
    bench_opts = (
        f"--sense-r {model.setup.sense_ohm:g}"
        if model.setup.bench == "divider"
        else f"--bench across --feed-r {model.setup.feed_ohm:g}"
    )
    with SimulatedBench(model) as bench:
        click.echo(f"simulated bench: {text}")
        click.echo(f"  generator  {bench.addresses['generator']}")
        click.echo(f"  digitiser  {bench.addresses['digitiser']}")
        click.echo("try, in another terminal:")
        click.echo(
            f"  fitkit acquire sweep.csv --generator {bench.addresses['generator']} "
            f"--digitiser {bench.addresses['digitiser']} --span {start / 1e3:g}k:{stop / 1e3:g}k "
            f"{bench_opts} --model {model.topology}"
        )
        click.echo("(Ctrl-C stops the bench)", err=True)
        sys.stdout.flush()  # the addresses are wanted now, even through a pipe
        try:
            time.sleep(seconds) if seconds is not None else _wait_forever()
        except KeyboardInterrupt:
            click.echo("simulated bench stopped", err=True)


def _wait_forever() -> None:
    while True:
        time.sleep(3600)
