"""``fitkit acquire``: take a sweep with a generator and a digitiser, then fit it."""

from __future__ import annotations

import contextlib
import sys

import click

from fitkit.cli.base import main, reports_errors
from fitkit.cli.plan_cmd import TARGETS
from fitkit.topologies import TOPOLOGIES
from fitkit.units import format_quantity


def _target(text: str) -> tuple:
    """NAME=PERCENT, NAME one of 'fitkit plan --target's names (docs/names.md)."""
    from fitkit.errors import SetupError
    from fitkit.names import current_name

    name, sep, pct = text.partition("=")
    try:
        rel = float(pct.strip().rstrip("%")) / 100.0
    except ValueError:
        rel = -1.0
    name = current_name(name.strip(), "--target") if sep else name
    if not sep or name not in TARGETS or not pct.strip().endswith("%") or rel <= 0:
        raise SetupError(
            f"cannot read the target {text!r}",
            remedy="write NAME=PERCENT with NAME one of " + ", ".join(TARGETS) + ", e.g. Q=0.5%",
        )
    return name, rel


def _bench(opts: dict):
    from fitkit.setups import Setup
    from fitkit.units import parse_quantity

    fields = {
        "source_ohm": parse_quantity(opts["source_r"], "ohm", what="source resistance"),
        "relative": opts["relative"],
    }
    if opts["sense_r"]:
        fields["sense_ohm"] = parse_quantity(opts["sense_r"], "ohm", what="sense resistor")
    if opts["feed_r"]:
        fields["feed_ohm"] = parse_quantity(opts["feed_r"], "ohm", what="feed resistor")
    if opts["probe_c"]:
        fields["probe_f"] = parse_quantity(opts["probe_c"], "F", what="probe capacitance")
    return Setup(opts["bench"], "ratio", **fields)


def _progress(target: str):
    def show(points: int, fit) -> None:
        q = fit[target]
        parts = [f"{points:4d} points", f"f0 {_brief(fit['f0'])}"]
        if target != "f0":
            parts.append(f"{target} {_brief(q)}")
        parts.append(f"({q.stderr / abs(q.value):.2%})")
        click.echo("  " + "  ".join(parts), err=True)

    return show


@main.command("acquire")
@click.argument("sweep_file", type=click.Path(dir_okay=False))
@click.option(
    "--generator",
    "generator_address",
    help="VISA address of the generator, e.g. TCPIP::192.168.1.20::5025::SOCKET.",
)
@click.option(
    "--digitiser",
    "digitiser_address",
    help="VISA address of the two-channel "
    "digitiser (input on the first channel of the profile, output on the second).",
)
@click.option(
    "--simulated",
    type=click.Choice(["series", "tank", "coil"]),
    help="Take the sweep from a simulated bench on this computer instead "
    "(no instruments needed; see 'fitkit simbench').",
)
@click.option(
    "--profile",
    "profile_path",
    type=click.Path(dir_okay=False),
    help="Instrument profile (TOML); default: the shipped SCPI profile.",
)
@click.option("--span", help="Frequencies of the coarse pass, START:STOP, e.g. 100k:1M.")
@click.option(
    "--bench",
    type=click.Choice(["divider", "across"]),
    default="divider",
    show_default=True,
    help="How the circuit sits between the two channels.",
)
@click.option("--sense-r", help="Sense resistor of a divider, ohm (e.g. 47).")
@click.option("--feed-r", help="Resistor feeding the circuit on an across bench, ohm.")
@click.option(
    "--source-r", default="50", show_default=True, help="Generator source resistance, ohm."
)
@click.option("--probe-c", help="Probe/input capacitance across the output, e.g. 15p.")
@click.option(
    "--relative",
    is_flag=True,
    help="The ratio's scale is not calibrated (only its shape counts). A relative "
    "divider sweep needs no --sense-r and fixes only f0 and the loaded Q.",
)
@click.option(
    "--model",
    type=click.Choice([*TOPOLOGIES, "auto"]),
    metavar="MODEL",
    help="Circuit model fitted as points come in, as for 'fitkit fit': series, tank, "
    "coil, each also with -sqrtf, or auto [default: series; with --simulated, the "
    "simulated circuit's].",
)
@click.option(
    "--target",
    help="Stop when this value's standard uncertainty is reached, NAME=PERCENT "
    "(NAME as for 'fitkit plan --target': R, L, C, f0, Q, Q_loaded, bandwidth, "
    "loaded_bandwidth; R_dynamic, C_self, f_self for their models) "
    "[default: Q=0.5%, Q_loaded=0.5% for a relative divider sweep].",
)
@click.option(
    "--max-points",
    default=200,
    show_default=True,
    type=click.IntRange(8, 100000),
    help="Point budget.",
)
@click.option(
    "--time-limit",
    default=600.0,
    show_default=True,
    type=click.FloatRange(min=1),
    help="Stop after this many seconds.",
)
@click.option(
    "--amplitude",
    default="1 Vpp",
    show_default=True,
    help="Generator amplitude as set on its display.",
)
@click.option(
    "--max-amplitude",
    default="5 Vpp",
    show_default=True,
    help="Ceiling: a larger --amplitude is refused.",
)
@click.option(
    "--read",
    "read_mode",
    type=click.Choice(["waveform", "scope"]),
    default="waveform",
    show_default=True,
    help="waveform: capture both channels and fit sines (each point gets its own "
    "noise); scope: the digitiser's own amplitude and phase measurements.",
)
@click.option(
    "--settle-periods",
    default=20.0,
    show_default=True,
    type=click.FloatRange(min=0),
    help="Periods to wait after each frequency change.",
)
@click.option(
    "--settle-min",
    default="2m",
    show_default=True,
    help="Shortest wait after each frequency change, seconds.",
)
@click.option("--resume", is_flag=True, help="Continue the stopped sweep in SWEEP_FILE.")
@click.option("--force", is_flag=True, help="Replace an existing SWEEP_FILE and setup file.")
@reports_errors
def acquire_command(sweep_file, **opts):
    """Take a sweep of a tuned circuit with a generator and a two-channel digitiser.

    A coarse pass over --span finds the resonance; then points go where they inform the
    fit most, the fit updating as they come in (progress on stderr), until --target is
    met or --max-points or --time-limit is reached. The sweep goes to SWEEP_FILE (saved
    after every point; --resume continues a stopped one) with fitkit-setup.toml beside
    it, and the fit is printed as 'fitkit fit' prints it.

    The generator output is on only during the sweep: it is switched off at the end, on
    Ctrl-C and on any error. Read docs/safety.md before connecting mains or valve sets.
    """
    import dataclasses
    from pathlib import Path

    from fitkit.bench_file import DEFAULT_NAME, parse_amplitude
    from fitkit.errors import SetupError, refuse_overwrite
    from fitkit.instruments.bench_model import SCENARIOS, scenario_model
    from fitkit.instruments.profile import load_profile
    from fitkit.instruments.reading import ReadSettings
    from fitkit.instruments.session import SweepRequest, take_sweep
    from fitkit.instruments.simbench import SimulatedBench
    from fitkit.instruments.sweep_file import write_setup_file
    from fitkit.report.table import fit_table
    from fitkit.units import parse_quantity
    from fitkit.workflow import fit_file

    out = Path(sweep_file)
    setup_path = out.parent / DEFAULT_NAME
    if not opts["resume"]:
        refuse_overwrite(out, "sweep", opts["force"])
    elif not out.is_file():
        raise SetupError("there is no sweep to continue", remedy="drop --resume", path=out)
    vpp = 2 * 2**0.5  # volts peak-to-peak per volt RMS of a sine
    model, span = None, opts["span"]
    if opts["simulated"]:
        given = [o for o in ("sense_r", "feed_r", "probe_c") if opts[o]]
        if given:
            raise SetupError(
                "the simulated bench brings its own circuit and bench",
                remedy="drop " + ", ".join("--" + o.replace("_", "-") for o in given),
            )
        model = scenario_model(opts["simulated"])
        setup = model.setup
        if opts["relative"]:  # the fit is told no scale (and on a divider, no fixture)
            sense = None if setup.bench == "divider" else setup.sense_ohm
            setup = dataclasses.replace(setup, relative=True, sense_ohm=sense)
        topology = opts["model"] or model.topology
        span = span or "{:g}:{:g}".format(*SCENARIOS[opts["simulated"]][2])
    else:
        if not (opts["generator_address"] and opts["digitiser_address"]):
            raise SetupError(
                "no instruments given",
                remedy="give --generator and --digitiser addresses, or try --simulated series",
            )
        setup, topology = _bench(opts), opts["model"] or "series"
    default_target = "Q_loaded=0.5%" if setup.relative and setup.bench == "divider" else "Q=0.5%"
    target, target_rel = _target(opts["target"] or default_target)
    if not span or ":" not in span:
        raise SetupError("no span given", remedy="give --span START:STOP, e.g. 100k:1M")
    start, stop = (parse_quantity(x, "Hz", what="span") for x in span.split(":", 1))
    request = SweepRequest(
        start,
        stop,
        amplitude_vpp=parse_amplitude(opts["amplitude"]) * vpp,
        ceiling_vpp=parse_amplitude(opts["max_amplitude"]) * vpp,
        topology=topology,
        target=target,
        target_rel=target_rel,
        max_points=opts["max_points"],
        time_limit_s=opts["time_limit"],
    )
    settings = ReadSettings(
        opts["read_mode"],
        settle_periods=opts["settle_periods"],
        settle_min_s=parse_quantity(opts["settle_min"], "s", what="settling time"),
    )
    request.check(setup)
    write_setup_file(out.parent, setup, force=opts["force"])
    bench = SimulatedBench(model) if model else None
    with bench if bench else contextlib.nullcontext():
        addresses = (
            bench.addresses
            if bench
            else {"generator": opts["generator_address"], "digitiser": opts["digitiser_address"]}
        )
        try:
            taken = take_sweep(
                request,
                setup,
                load_profile(opts["profile_path"]),
                addresses,
                out,
                settings=settings,
                resume=opts["resume"],
                progress=_progress(target),
            )
        except KeyboardInterrupt:
            click.echo(
                f"\nStopped: the generator output is off; the points taken are in {out} "
                "(add --resume to continue).",
                err=True,
            )
            sys.exit(130)
    fit, _ = fit_file(out, topology=topology)
    click.echo(fit_table(fit))
    click.echo(f"  stopped  {taken.stopped}")
    click.echo(f"  sweep    written to {out}, setup to {setup_path}")


def _brief(q) -> str:
    """Value and uncertainty only, marked when doubtful (a progress line stays short)."""
    if not q.determined:
        return "not determined"
    return format_quantity(q.value, q.unit, q.stderr) + (" (doubtful)" if q.doubtful else "")
