"""``fitkit predict``: retune, rejection of carriers and the loss a job can afford."""

from __future__ import annotations

import json
import math
from dataclasses import replace
from pathlib import Path

import click
from uncertainties import ufloat

from fitkit.bench_file import parse_known
from fitkit.chain import CIRCUITS, PLACEMENTS, Chain, chain_from_setup
from fitkit.cli.base import main, plot_options, reports_errors
from fitkit.cli.fit_cmd import bench_options, overrides_from_options
from fitkit.errors import InputError, PredictionError, refuse_overwrite
from fitkit.predict import Carrier, Prediction, predict, value_and_error, values_from_fit
from fitkit.rasters import RASTERS, get_raster
from fitkit.report.predict_plot import plot_prediction
from fitkit.result import COMPONENTS, load_fit
from fitkit.topologies import TOPOLOGIES
from fitkit.units import format_quantity, parse_quantity
from fitkit.workflow import fit_file


@main.command("predict")
@click.argument("sweep_file", required=False, type=click.Path(dir_okay=False))
@bench_options
@click.option(
    "--saved-fit",
    type=click.Path(dir_okay=False),
    help="Start from a fit saved with 'fitkit fit SWEEP --json > fit.json'.",
)
@click.option(
    "--value",
    "typed",
    multiple=True,
    metavar="NAME=VALUE",
    help="Start from typed values, each with an optional error: R=6.8+-0.1 L=220u+-1u C=1n.",
)
@click.option(
    "--circuit",
    type=click.Choice(CIRCUITS),
    help="What typed values describe: a series R-L-C [default] or a tank (coil with loss R "
    "across C). A fit brings its own.",
)
@click.option("--wanted", help="The wanted carrier (e.g. 999k); the circuit is retuned to it.")
@click.option("--as-fitted", is_flag=True, help="Keep the fitted C instead of retuning.")
@click.option(
    "--tune-to", help="Tune here instead of on the wanted carrier (a trap on a neighbour)."
)
@click.option("--c-range", help="The tuning capacitor's range, e.g. 20p..500p.")
@click.option("--band", help="Band edges to check the capacitor range against, e.g. 531k..1602k.")
@click.option(
    "--carrier",
    "carrier_texts",
    multiple=True,
    metavar="FREQ[,LEVEL]",
    help="An unwanted carrier: absolute (1017k) or an offset from the wanted one (+18k, -9k), "
    "with an optional level in dB relative to the wanted one (+9k,+12).",
)
@click.option(
    "--carrier-file",
    type=click.Path(dir_okay=False),
    help="Unwanted carriers, one FREQ[,LEVEL] a line; '#' starts a comment.",
)
@click.option(
    "--raster",
    type=click.Choice(sorted(RASTERS)),
    help="Add the neighbours one and two channels either side on this channel raster.",
)
@click.option("--image-if", help="Add the image carrier at wanted + 2 IF (e.g. 455k).")
@click.option(
    "--require-db",
    type=float,
    help="Rejection every carrier needs: prints the largest loss R and smallest loaded Q.",
)
@click.option(
    "--placement",
    type=click.Choice(PLACEMENTS),
    help="In service: in series between source and load, or across the line (shunt). "
    "Default: the chain of the bench setup.",
)
@click.option("--chain-source-r", help="In service: source resistance, ohm [default: 0].")
@click.option("--chain-load-r", help="In service: load resistance, ohm (e.g. 2k2).")
@click.option("--chain-load-c", help="In service: capacitance across the load (e.g. 20p).")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of a table.")
@plot_options
@reports_errors
def predict_command(sweep_file, saved_fit, typed, as_json, plot_path, force, **opts):
    """Predict from a fitted circuit: C for a wanted carrier, rejection of each unwanted
    carrier with its uncertainty, and the loss resistance a required rejection allows.

    Start from SWEEP_FILE (fitted with the same bench options as 'fitkit fit'), from
    --saved-fit, or from --value R=.. L=.. C=... Exit status 2 on bad input.
    """
    if plot_path:
        refuse_overwrite(plot_path, "plot", force)
    values, bench_chain, origin, circuit = _start(sweep_file, saved_fit, typed, opts)
    chain = _chain(opts) or bench_chain
    if chain is None:
        raise PredictionError(
            "typed values come with no chain to sit in",
            remedy="describe it: --placement series --chain-source-r 50 --chain-load-r 50",
        )
    chain = replace(chain, circuit=circuit)
    wanted = _hz(opts["wanted"], "wanted carrier")
    if wanted is None and (opts["raster"] or opts["image_if"] or _has_offsets(opts)):
        raise PredictionError(
            "offsets, raster neighbours and the image need a wanted carrier",
            remedy="give it with --wanted, e.g. --wanted 999k",
        )
    carriers = _carriers(opts, wanted)
    prediction = predict(
        values,
        chain,
        wanted_hz=wanted,
        tune_hz=_hz(opts["tune_to"], "tuning frequency"),
        retune=not opts["as_fitted"],
        carriers=tuple(carriers),
        c_range_f=_range(opts["c_range"], "F", "--c-range"),
        band_hz=_range(opts["band"], "Hz", "--band"),
        required_db=opts["require_db"],
    )
    if plot_path:
        plot_prediction(prediction, plot_path)
    if as_json:
        click.echo(json.dumps({"source": origin, **prediction.to_dict()}, indent=2))
        return
    click.echo(prediction_table(prediction, origin))
    if plot_path:
        click.echo(f"  plot     written to {plot_path}")


def _start(sweep_file, saved_fit, typed, opts) -> tuple:
    given = [x for x in (sweep_file, saved_fit, typed) if x]
    if len(given) != 1:
        raise InputError(
            "give exactly one starting point",
            remedy="a sweep file, --saved-fit FIT.json, or --value R=.. --value L=.. --value C=..",
        )
    if typed:
        return _typed_values(typed), None, "typed values", opts.get("circuit") or "series"
    if opts.get("circuit"):
        raise InputError(
            "--circuit describes typed values; a fit brings its own circuit",
            remedy="drop --circuit, or fit the sweep with the model you mean (--model)",
        )
    if saved_fit:
        fit = load_fit(saved_fit)
        origin = f"saved fit {saved_fit}"
    else:
        fit, _ = fit_file(
            sweep_file,
            setup_path=opts.get("setup_file"),
            overrides=overrides_from_options(opts),
            known=opts.get("known", ()),
            topology="auto",
        )
        origin = f"fit of {sweep_file}"
    values = values_from_fit(fit)
    try:
        chain = chain_from_setup(fit.setup)
    except PredictionError:
        chain = None  # an impedance or reflection bench: the user must describe the chain
    return values, chain, origin, fit.topology


def _typed_values(typed) -> dict:
    values = {}
    for text in typed:
        name, (value, err) = parse_known(text)
        if name in values:
            raise PredictionError(
                f"--value gives {name} more than once",
                remedy="give each of R, L, C once, e.g. --value R=6.8 --value L=220u --value C=1n",
            )
        values[name] = ufloat(value, err) if err else value  # a zero error is no error
    missing = [n for n in COMPONENTS if n not in values]
    if missing:
        raise PredictionError(
            f"typed values lack {', '.join(missing)}",
            remedy="give all three, e.g. --value R=6.8 --value L=220u+-1u --value C=1n",
        )
    return values


def _chain(opts) -> Chain | None:
    keys = ("placement", "chain_source_r", "chain_load_r", "chain_load_c")
    if not any(opts[k] for k in keys):
        return None
    load = opts["chain_load_r"]
    return Chain(
        opts["placement"] or "series",
        parse_quantity(opts["chain_source_r"] or 0.0, "ohm", what="--chain-source-r"),
        None if load is None else parse_quantity(load, "ohm", what="--chain-load-r"),
        parse_quantity(opts["chain_load_c"] or 0.0, "F", what="--chain-load-c"),
    )


def _hz(text, what: str) -> float | None:
    return None if text is None else parse_quantity(text, "Hz", what=what)


def _range(text, unit: str, option: str) -> tuple | None:
    if text is None:
        return None
    lo, sep, hi = text.partition("..")
    example = "20p..500p" if unit == "F" else "531k..1602k"
    if not sep:
        raise PredictionError(
            f"cannot read {option} {text!r} as a range", remedy=f"write LOW..HIGH, e.g. {example}"
        )
    low, high = parse_quantity(lo, unit, what=option), parse_quantity(hi, unit, what=option)
    if not 0 < low < high:
        raise PredictionError(
            f"{option} {text!r} is not a range from a lower to a higher value above 0",
            remedy=f"give the smaller value first, e.g. {option} {example}",
        )
    return low, high


def _has_offsets(opts) -> bool:
    return any(t.strip()[:1] in "+-" for t in opts["carrier_texts"])


def _carriers(opts, wanted_hz: float | None) -> list[Carrier]:
    lines = [(t, "--carrier") for t in opts["carrier_texts"]]
    if opts["carrier_file"]:
        lines += _carrier_file_lines(opts["carrier_file"])
    carriers = [_parse_carrier(text, wanted_hz, where) for text, where in lines]
    if opts["raster"]:
        raster = get_raster(opts["raster"])
        carriers += [Carrier(f, 0.0, raster.name) for f in raster.neighbours_hz(wanted_hz)]
    if opts["image_if"]:
        if_hz = parse_quantity(opts["image_if"], "Hz", what="--image-if")
        carriers.append(Carrier(wanted_hz + 2.0 * if_hz, 0.0, "image"))
    return carriers


def _carrier_file_lines(path) -> list:
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(
            f"cannot read carriers ({exc.strerror})",
            remedy="check the --carrier-file path and that the file is readable",
            path=path,
        ) from None
    except UnicodeDecodeError:
        raise InputError(
            "the carrier file is not UTF-8 text",
            remedy="write one carrier per line as plain text (UTF-8), e.g. '1008k,+6'",
            path=path,
        ) from None
    if "\x00" in text:
        raise InputError(
            "the carrier file holds binary data, not text",
            remedy="write one carrier per line as plain text (UTF-8), e.g. '1008k,+6'",
            path=path,
        )
    out = []
    for number, line in enumerate(text.splitlines(), start=1):
        line = line.split("#", 1)[0].strip()
        if line:
            out.append((line, f"{path}, line {number}"))
    return out


def _parse_carrier(text: str, wanted_hz: float | None, where: str) -> Carrier:
    freq_text, _, level_text = text.partition(",")
    freq_text = freq_text.strip()
    freq = parse_quantity(freq_text, "Hz", what=f"carrier frequency ({where})")
    offset = freq_text[:1] in "+-"
    level_text = level_text.strip().removesuffix("dB").removesuffix("db").strip()
    try:
        level = float(level_text) if level_text else 0.0
    except ValueError:
        level = math.nan
    if not math.isfinite(level):
        raise PredictionError(
            f"cannot read the carrier level {level_text!r} ({where})",
            remedy="write the level in dB relative to the wanted carrier, e.g. +9k,+12",
        )
    label = f"offset {freq_text}" if offset else ""
    return Carrier(wanted_hz + freq if offset else freq, level, label)


def _db(x) -> str:
    value, err = value_and_error(x)
    text = format_quantity(value, "", err)
    return " +/- ".join(part + " dB" for part in text.split(" +/- "))


def _u(x, unit: str) -> str:
    value, err = value_and_error(x)
    return format_quantity(value, unit, err)


def _loading(p: Prediction) -> str:
    chain = p.chain
    at = None if p.extremum_hz is None else value_and_error(p.extremum_hz)[0]
    rloop = format_quantity(chain.loop_ohm if at is None else chain.loop_ohm_at(at), "ohm")
    if chain.circuit == "tank":
        return f"the chain's {rloop} damping the tank's dynamic resistance"
    return f"R + {rloop} of the chain in the loop"


def prediction_table(p: Prediction, origin: str) -> str:
    """The readable answer: circuit, chain, tuning, carriers, band and loss limit."""
    v = p.values
    lines = [
        f"fitkit predict: {TOPOLOGIES[p.chain.circuit].label} from {origin}",
        f"  circuit  R {_u(v['R'], 'ohm')}, L {_u(v['L'], 'H')}",
        f"  chain    {p.chain.describe()}",
        f"  wanted   {format_quantity(p.wanted_hz, 'Hz')}",
        f"  tuning   C {_u(v['C'], 'F')} ({p.c_origin}: {_extremum_text(p)})",
        f"  loaded Q {_u(p.q_loaded, '')} ({_loading(p)})",
    ]
    if p.carriers:
        head = f"  {'carrier':<14}{'offset':>12}{'level':>9}   {'rejection':<27}  S/I at the output"
        lines += ["", head]
        for r in p.carriers:
            off = r.carrier.freq_hz - p.wanted_hz
            lines.append(
                f"  {format_quantity(r.carrier.freq_hz, 'Hz'):<14}"
                f"{('+' if off >= 0 else '-') + format_quantity(abs(off), 'Hz'):>12}"
                f"{r.carrier.level_db:>+7.1f}dB   {_db(r.rejection_db):<27}  {_db(r.sir_db)}"
                + (f"  ({r.carrier.label})" if r.carrier.label else "")
            )
    if p.notes:
        lines += [""] + [f"  note     {note}" for note in p.notes]
    if p.band is not None:
        lines += ["", *_band_lines(p)]
    if p.limit is not None:
        lines += ["", *_limit_lines(p)]
    return "\n".join(lines)


def _extremum_text(p: Prediction) -> str:
    if p.extremum_hz is None:
        near = format_quantity(p.tune_hz, "Hz")
        return f"the chain's response has no {p.chain.extremum} near {near}"
    at = _u(p.extremum_hz, "Hz")
    if p.chain.passes:
        return f"the chain's response peaks at {at}"
    return f"the chain's null sits at {at}"


def _band_lines(p: Prediction) -> list:
    b = p.band
    lo, hi = (format_quantity(f, "Hz") for f in b.band_hz)
    need = f"{_u(b.c_needed_f[0], 'F')} to {_u(b.c_needed_f[1], 'F')}"
    out = [f"  band     {lo} to {hi} needs C from {need} (ratio {b.ratio_needed:.2f})"]
    if b.covered is not None:
        c_lo, c_hi = (format_quantity(c, "F") for c in p.c_range_f)
        verdict = "covers it" if b.covered else "does NOT cover it"
        out.append(f"           the range {c_lo} to {c_hi} (ratio {b.ratio_given:.2f}) {verdict}")
    return out


def _limit_lines(p: Prediction) -> list:
    lim = p.limit
    meets = value_and_error(p.values["R"])[0] <= value_and_error(lim.r_max_ohm)[0]
    return [
        f"  need     {lim.required_db:g} dB against every carrier; binding carrier "
        f"{format_quantity(lim.binding.freq_hz, 'Hz')}",
        f"           loss R at most {_u(lim.r_max_ohm, 'ohm')}, "
        f"loaded Q at least {_u(lim.q_loaded_min, '')}",
        f"           this circuit (R {_u(p.values['R'], 'ohm')}) "
        + ("meets it" if meets else "does NOT meet it"),
    ]
