"""``fitkit plan``: the best any fit can do with a planned sweep, and the sweep to take."""

from __future__ import annotations

import math
import re

import click
import numpy as np

from fitkit.bench_file import build_setup, known_values, load_bench_file
from fitkit.circuits import TWO_PI
from fitkit.cli.base import main, reports_errors
from fitkit.cli.fit_cmd import bench_options, overrides_from_options
from fitkit.errors import SetupError
from fitkit.names import current_name
from fitkit.noise import parse_noise
from fitkit.plan import (
    BOUNDED,
    READING_OF_BENCH,
    SPACINGS,
    Bounds,
    Expected,
    Plan,
    SweepShape,
    cramer_rao,
    hz_to_bandwidths,
    plan_sweep,
)
from fitkit.plan import resonance as resonance_of
from fitkit.result import QUANTITIES
from fitkit.setups import Setup
from fitkit.sweep import KINDS, Sweep
from fitkit.topologies import TOPOLOGIES
from fitkit.units import format_quantity, parse_quantity
from fitkit.version import __version__

#: the values --target takes, named as everywhere else (docs/names.md)
TARGETS = (*BOUNDED, "R_dynamic", "C_self", "f_self")
DEFAULT_SPAN_BW = 3.0


@main.command("plan")
@click.option("--r", "r_text", help="Expected circuit loss R, ohm (e.g. 5, 2R2).")
@click.option("--l", "l_text", help="Expected L (e.g. 100u).")
@click.option("--c", "c_text", help="Expected C (e.g. 1n).")
@click.option("--f0", "f0_text", help="Expected resonance (with --q and one of --l/--c).")
@click.option("--q", "q_value", type=float, help="Expected circuit Q, unloaded (with --f0).")
@click.option(
    "--model",
    type=click.Choice([n for n in TOPOLOGIES if not n.endswith("-sqrtf")]),
    default="series",
    show_default=True,
    help="The circuit, as for 'fitkit fit --model': series R-L-C, tank (coil with loss "
    "across C) or coil (with self-capacitance, in series with C).",
)
@click.option("--c-self", "c_self_text", help="Expected self-capacitance of a coil (--model coil).")
@click.option(
    "--r-dc",
    "r_dc_text",
    help="The coil's dc resistance (an ohmmeter's reading, below --r): the loss then grows "
    "as R_dc + k sqrt(f) to R at the resonance (the -sqrtf models of 'fitkit fit').",
)
@click.option(
    "--kind",
    type=click.Choice(KINDS),
    help="What the instrument will read [default: what the bench reads; ratio on a divider].",
)
@bench_options
@click.option(
    "--noise",
    required=True,
    help="Expected noise per point: additive '1e-3' (measured unit, per real and per "
    "imaginary part) or relative '0.05dB,0.3deg' / '1%'.",
)
@click.option("--magnitude-only", is_flag=True, help="Plan for magnitude readings (no phase).")
@click.option(
    "--span",
    type=float,
    help=f"Half-span in loaded bandwidths (+-SPAN) [default: {DEFAULT_SPAN_BW:g}].",
)
@click.option("--start", "start_text", help="First frequency of the sweep (with --stop).")
@click.option("--stop", "stop_text", help="Last frequency of the sweep (with --start).")
@click.option(
    "--points",
    default=201,
    show_default=True,
    type=click.IntRange(max=100_000),
    help="Points per sweep.",
)
@click.option("--spacing", type=click.Choice(SPACINGS), default="linear", show_default=True)
@click.option("--centre", "centre_text", help="Sweep centre frequency [default: the resonance].")
@click.option(
    "--target",
    metavar="NAME=PRECISION",
    help="Find the cheapest sweep that knows NAME (R, L, C, f0, Q, Q_loaded, bandwidth, "
    "loaded_bandwidth) to PRECISION, e.g. L=0.5%.",
)
@reports_errors
def plan_command(noise, magnitude_only, points, spacing, target, **opts):
    """Print the Cramer-Rao bound: the smallest standard deviations of R, L, C, f0 and Q
    that any fit of the planned sweep can reach, and with --target the sweep to take.

    Every model and bench of 'fitkit fit' is covered; the reading kind follows from the
    bench unless --kind says otherwise. The sweep is --span loaded bandwidths either side
    of --centre (the resonance by default), or --start to --stop. Values the planned
    sweep cannot determine at all are named, with the reason. Exit status 2 on bad input.
    """
    complex_data = not magnitude_only
    wanted = _parse_target(target) if target else None
    file = load_bench_file(opts["setup_file"]) if opts.get("setup_file") else {}
    overrides = overrides_from_options(opts)
    kind, kind_from = _reading_kind(opts.pop("kind"), overrides, file.get("bench"))
    stand_in = _stand_in_sweep(kind, complex_data)
    setup = build_setup(stand_in, file.get("bench"), overrides)
    known = known_values(file.get("known"), tuple(opts.get("known", ())))
    expected = _expected(opts, setup)
    model = {"model": expected.model, "c_self_f": expected.c_self_f,
             "r_dc_ohm": expected.r_dc_ohm}  # fmt: skip
    r_ohm, l_h, c_f = expected.r_ohm, expected.l_h, expected.c_f
    f0, ql = resonance_of(setup, r_ohm, l_h, c_f, **model)
    shape = _shape(opts, points, spacing, f0, ql)
    noise_model = parse_noise(noise, stand_in)
    freq_hz = shape.frequencies(f0, ql)
    bounds = cramer_rao(
        setup,
        freq_hz,
        r_ohm,
        l_h,
        c_f,
        noise_model,
        complex_data=complex_data,
        known=known,
        **model,
    )
    click.echo(f"fitkit {__version__}: Cramer-Rao lower bound for a planned sweep")
    click.echo(f"  model    {expected.describe()}")
    click.echo(f"  bench    {setup.describe()}; reads {setup.kind} ({kind_from})")
    click.echo(f"  sweep    {_sweep_text(shape, freq_hz)}")
    click.echo(
        f"  data     {'complex' if complex_data else 'magnitude only'}, noise "
        f"{noise_model.describe(setup.kind).replace('stated', 'per point')}"
    )
    click.echo("")
    click.echo(bounds_table(bounds))
    if wanted:
        name, rel = wanted
        found = plan_sweep(
            setup,
            r_ohm,
            l_h,
            c_f,
            noise_model,
            name,
            rel,
            complex_data=complex_data,
            spacing=spacing,
            offset_bw=shape.offset_bw,
            known=known,
            **model,
        )
        click.echo("")
        click.echo(plan_text(found, f0, ql))


def _stand_in_sweep(kind: str, complex_data: bool) -> Sweep:
    """A two-point sweep of the planned kind: the shared setup and noise parsers read only
    its kind and whether it holds phase."""
    values = np.ones(2, dtype=complex if complex_data else float)
    return Sweep(np.array([1.0, 2.0]), values, kind, source="<planned sweep>")


def _reading_kind(kind: str | None, overrides: dict, file_bench: dict | None) -> tuple:
    """The reading kind, and where it came from: --kind, else the bench's own reading."""
    if kind:
        return kind, "as given with --kind"
    bench = overrides.get("bench") or (file_bench or {}).get("arrangement")
    if bench in READING_OF_BENCH:
        return READING_OF_BENCH[bench], "the bench's reading"
    return "ratio", "the default reading"


def _expected(opts: dict, setup: Setup) -> Expected:
    """The expected circuit: the model, and R, L, C from (R, L, C) or (f0, Q, L or C)."""
    extra = {
        "c_self_f": _optional(opts.get("c_self_text"), "F", "--c-self"),
        "r_dc_ohm": _optional(opts.get("r_dc_text"), "ohm", "--r-dc"),
    }
    return Expected(*_circuit(opts), opts.get("model") or "series", **extra)


def _optional(text, unit: str, option: str) -> float | None:
    return None if text is None else parse_quantity(text, unit, what=option)


def _shape(opts: dict, points: int, spacing: str, f0: float, ql: float) -> SweepShape:
    """The sweep's shape from --span and --centre, or from --start and --stop."""
    start, stop = opts.get("start_text"), opts.get("stop_text")
    span, centre_text = opts.get("span"), opts.get("centre_text")
    if start is None and stop is None:
        centre = parse_quantity(centre_text, "Hz", what="centre") if centre_text else f0
        if not centre > 0:
            raise SetupError(f"the sweep centre must be above 0 Hz, not {centre_text!r}")
        span = DEFAULT_SPAN_BW if span is None else span
        return SweepShape(span, points, spacing, hz_to_bandwidths(centre, f0, ql))
    if start is None or stop is None or span is not None or centre_text:
        raise SetupError(
            "a sweep is given either by --start and --stop, or by --span and --centre",
            remedy="give both --start and --stop (e.g. --start 300k --stop 400k) and "
            "leave out --span and --centre",
        )
    lo, hi = (parse_quantity(t, "Hz", what=w) for t, w in ((start, "--start"), (stop, "--stop")))
    if not 0 < lo < hi:
        raise SetupError(
            f"the sweep from {start!r} to {stop!r} does not run upwards from above 0 Hz",
            remedy="give --start below --stop, both above 0 Hz",
        )
    ends = [hz_to_bandwidths(f, f0, ql) for f in (lo, hi)]
    return SweepShape(0.5 * (ends[1] - ends[0]), points, spacing, 0.5 * (ends[0] + ends[1]))


def _circuit(opts: dict) -> tuple:
    """R, L, C from (R, L, C) or (f0, Q and one of L, C)."""
    given = {k: opts.get(f"{k}_text") for k in ("r", "l", "c", "f0")}
    units = {"r": "ohm", "l": "H", "c": "F", "f0": "Hz"}
    v = {k: parse_quantity(t, units[k], what=k.upper()) for k, t in given.items() if t}
    if opts.get("q_value") is not None:
        given["q"] = v["q"] = opts["q_value"]
    for k, value in v.items():
        if not (math.isfinite(value) and value > 0):
            raise SetupError(
                f"the expected {k.upper()} must be above zero, not {given[k]!r}",
                remedy="give the circuit you expect, e.g. --r 5 --l 100u --c 1n",
            )
    if {"r", "l", "c"} <= set(v) and not {"f0", "q"} & set(v):
        return v["r"], v["l"], v["c"]
    if {"f0", "q"} <= set(v) and len({"l", "c"} & set(v)) == 1 and "r" not in v:
        w0 = TWO_PI * v["f0"]
        l_h = v["l"] if "l" in v else 1.0 / (w0**2 * v["c"])
        return w0 * l_h / v["q"], l_h, 1.0 / (w0**2 * l_h)
    raise SetupError(
        "the expected circuit needs either --r, --l and --c, or --f0, --q and one of --l/--c",
        remedy="e.g. --r 5 --l 100u --c 1n, or --f0 503k --q 63 --l 100u",
    )


def _parse_target(text: str) -> tuple:
    m = re.fullmatch(r"\s*(\w+)\s*=\s*([0-9.]+(?:[eE][-+]?\d+)?)\s*(%?)\s*", text)
    name = current_name(m.group(1), "--target") if m else None
    if name not in TARGETS:
        raise SetupError(
            f"cannot read the target {text!r}",
            remedy="write NAME=PRECISION with NAME one of " + ", ".join(TARGETS) + ", e.g. L=0.5%",
        )
    rel = float(m.group(2)) / (100.0 if m.group(3) else 1.0)
    return name, rel


def _sweep_text(shape: SweepShape, freq_hz: np.ndarray) -> str:
    about = (
        f"{shape.offset_bw:+.3g} bandwidths from resonance"
        if shape.offset_bw
        else ("centred on the resonance")
    )
    return (
        f"{shape.points} points, {shape.spacing}, {format_quantity(freq_hz[0], 'Hz')} to "
        f"{format_quantity(freq_hz[-1], 'Hz')} (+-{shape.span_bw:.3g} loaded bandwidths, {about})"
    )


def bounds_table(bounds: Bounds) -> str:
    """Expected values, their bounds and the relative bounds (and, where the setup states
    uncertainties of its values, the bound with their share); gaps with their reasons."""
    width = max(len(QUANTITIES[name][1]) for name in bounds.quantities)
    head = f"  {'value':<{width}}  {'expected':>12}  {'bound (1 sigma)':>16}  {'relative':>9}"
    lines = [head + (f"  {'with the bench':>14}" if bounds.bench else "")]
    reasons = []
    for name in bounds.quantities:
        unit, label = QUANTITIES[name]
        q = bounds[name]
        if not q.determined:
            lines.append(f"  {label:<{width}}  {'':>12}  {'not determined':>16}")
            reasons.append(q.reason)
            continue
        line = (
            f"  {label:<{width}}  {format_quantity(q.value, unit):>12}  "
            f"{format_quantity(q.stderr, unit):>16}  {_percent(bounds.relative(name)):>9}"
        )
        if bounds.bench:
            line += f"  {_percent(bounds.relative(name, with_bench=True)):>14}"
        lines.append(line)
    lines.extend(f"  why: {reason}" for reason in dict.fromkeys(reasons))
    if bounds.bench:
        lines.append(
            "  with the bench: the bound and the share of the bench values' stated "
            "uncertainties, which no sweep lowers"
        )
    return "\n".join(lines)


def plan_text(found: Plan, f0_hz: float, q_loaded: float) -> str:
    """The planner's answer in a few lines."""
    label = QUANTITIES[found.target][1]
    want = f"  target   {label} to {_percent(found.target_rel)}"
    if found.shape is None:
        return f"{want}: cannot be reached with any sweep\n  why: {found.reason}"
    s = found.shape
    f = s.frequencies(f0_hz, q_loaded)
    sweep = (
        f"{s.points} {s.spacing} points over +-{s.span_bw:g} loaded bandwidths "
        f"({format_quantity(f[0], 'Hz')} to {format_quantity(f[-1], 'Hz')})"
    )
    reached = _percent(found.bounds.relative(found.target, with_bench=True))
    if found.averages == 1:
        return f"{want}: cheapest sweep on the grid: {sweep}, bound {reached}"
    return (
        f"{want}: no sweep on the grid reaches it; the best, {sweep}, gives {reached};\n"
        f"           average {found.averages} such sweeps (or lower the noise by "
        f"{math.sqrt(found.averages):.3g}x) to reach it"
    )


def _percent(fraction: float) -> str:
    return f"{100.0 * fraction:.3g}%"
