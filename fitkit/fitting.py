"""Fit a circuit to a sweep: closed-form start, lmfit refinement, honest errors.

The steps, each in its own module:

1. a closed-form start (:mod:`fitkit.estimate`) and unit-weight passes with the outlier
   step (:mod:`fitkit.problem`);
2. with ``topology="auto"``, the circuit the data support (:mod:`fitkit.model_choice`),
   the noise model (even or in proportion to the reading) and the bench terms (a delay,
   a tilt, a reading floor) that earn their place;
3. the last pass on lmfit, weighted by the noise, gives the covariance; component values
   follow with the ``uncertainties`` package, so L and C keep their strong correlation.
   Which values the sweep determines is computed from the singular directions of the
   model's Jacobian, not assumed;
4. the result is judged (:mod:`fitkit.fit_warnings`, :mod:`fitkit.adequacy`): a value the
   fit cannot vouch for is marked doubtful with the reason, never printed as if sound.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from fitkit.bootstrap import REPLICATES, intervals, needs_bootstrap
from fitkit.errors import FitError, SetupError
from fitkit.estimate import dip_contrast
from fitkit.fit_warnings import MIN_POINTS_IN_BAND, fit_warnings, points_in_band
from fitkit.model_choice import (
    EVIDENCE,
    add_bench_terms,
    choose_noise_domain,
    choose_topology,
    resonance_evidence,
)
from fitkit.noise import DB_PER_NEPER, Noise, parse_noise
from fitkit.problem import FirstPass, FitProblem, varied
from fitkit.propagation import Propagated, depending_on
from fitkit.result import (
    COMPONENTS,
    OPTIONAL,
    QUANTITIES,
    CircuitFit,
    FitStats,
    Quantity,
)
from fitkit.setup_uncertainty import setup_rows
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.topologies import get_topology
from fitkit.units import format_quantity, format_to


def fit_sweep(
    sweep: Sweep,
    setup: Setup,
    *,
    topology: str = "series",
    known: dict | None = None,
    noise: str | None = None,
    keep_outliers: bool = False,
) -> CircuitFit:
    """Fit a circuit model to a measured sweep.

    Parameters
    ----------
    sweep : Sweep
        The measured sweep.
    setup : Setup
        The bench arrangement it was taken with.
    topology : str
        ``"series"``, ``"tank"``, ``"coil"``, ``"tank-sqrtf"``, ``"coil-sqrtf"`` (see
        :mod:`fitkit.topologies`) or ``"auto"`` to fit each and keep the one the data
        support best.
    known : dict, optional
        Values measured otherwise, e.g. ``{"L": (100e-6, 0.5e-6)}`` (value, standard
        error) from an LCR meter; one of them pins the scale of a relative sweep.
    noise : str, optional
        ``"auto"`` (default: each point's own standard deviation when the sweep gives
        them, ``sweep.sigma``, taken as stated; otherwise even or proportional noise,
        chosen by the data, its level estimated), ``"column"`` (the per-point ones,
        required), ``"estimate"`` (ignore them; as auto without), ``"additive"`` or
        ``"relative"`` (that model, level estimated), or a stated level (see
        :func:`fitkit.noise.parse_noise`).
    keep_outliers : bool
        Keep points far from the model instead of refitting without them.

    Returns
    -------
    CircuitFit
        Values, uncertainties, correlations, fit statistics, warnings and doubtful marks.

    Raises
    ------
    FitError
        Too few points, a resonance outside the sweep (the error's ``outside`` says
        ``"above"`` or ``"below"`` and ``bound_hz`` the sweep's end), no resonance in the
        sweep, or a fit that does not converge.
    SetupError
        Known values that contradict each other, or an unknown topology.
    """
    known = _check_known(known or {})
    noise_model = parse_noise(noise, sweep)
    if sweep.sigma is not None and noise_model.per_point is None:  # the user chose otherwise
        sweep = dataclasses.replace(sweep, sigma=None)
    if sweep.points < 6:
        raise FitError(
            f"the sweep has only {sweep.points} points",
            remedy="sweep at least 20 points across the resonance",
            path=sweep.source,
        )
    domain = noise_model.domain
    choice = ""
    if topology == "auto":
        problem, first, choice, _ = choose_topology(sweep, setup, known, domain, keep_outliers)
    else:
        problem = FitProblem(sweep, setup, get_topology(topology), known)
        problem.may_keep_first = not noise_model.stated
        first = problem.first_pass(domain, keep_outliers)
    free_domain = not (noise_model.stated or noise_model.fixed_domain)
    if free_domain:
        first, _ = choose_noise_domain(problem, first, domain)
    if topology != "auto":  # (the candidates of auto earned theirs as they were fitted)
        problem, first = add_bench_terms(problem, first)
        if problem.bench.terms and free_domain:  # judged again on residuals that fit
            first, _ = choose_noise_domain(problem, first, domain)
    problem.check_inside(math.exp(first.values["lnf0"]), "the fitted resonance")
    evidence = resonance_evidence(problem, first)
    f = sweep.freq_hz
    span = f"between {format_quantity(f[0], 'Hz')} and {format_quantity(f[-1], 'Hz')}"
    contrast = max(dip_contrast(setup, problem.model(first.values), problem.topology))
    if evidence <= 0 and contrast < 2.0:  # (a wide, weak resonance is doubtful, not refused)
        raise FitError(
            f"the sweep shows no resonance: a straight line in log f fits it as well as any "
            f"circuit {span}",
            remedy="sweep a wider span around the expected resonance, and check that the "
            "circuit is connected as the setup says (a plain resistance shows no resonance)",
            path=sweep.source,
        )
    weak = []
    if evidence < EVIDENCE:
        weak.append(
            (
                f"the sweep barely shows a resonance: a straight line in log f fits it "
                f"nearly as well {span}; the values are doubtful (sweep closer to the "
                "resonance, with less noise or a more sensitive bench)",
                "all",
            )
        )
    if problem.bench.terms:
        choice = "; ".join(filter(None, [choice, f"bench terms: {problem.bench.describe()}"]))
    sigmas = noise_model
    if not noise_model.stated:
        sigmas = dataclasses.replace(
            problem.estimate_noise(first), fixed_domain=noise_model.fixed_domain
        )
    fit = _finish(problem, first, sigmas, weak)
    fit.choice = choice
    return fit


def _check_known(known: dict) -> dict:
    out = {}
    for name, value in known.items():
        if name not in COMPONENTS:
            raise SetupError(
                f"cannot take a known value for {name!r}",
                remedy="give a known R, L or C, e.g. L=100u",
            )
        v, s = value if isinstance(value, tuple) else (value, 0.0)
        if not (v > 0 and math.isfinite(v)):
            raise SetupError(f"the known {name} must be above zero, not {v!r}")
        out[name] = (float(v), float(s or 0.0))
    if len(out) > 1:
        raise SetupError(
            f"{len(out)} known values given ({', '.join(out)}); one pins the circuit",
            remedy="give only the one you trust most",
        )
    return out


def _finish(problem: FitProblem, first: FirstPass, noise: Noise, judged: list) -> CircuitFit:
    """The last pass on lmfit, weighted by the noise, and the result. When lmfit's first
    pass stands unchanged and one sigma weights every residual, weighting cannot move
    the minimum and the covariance it scaled by the reduced chi-square is already the
    one an estimated noise gives: that pass is the last, its chi-square put in units of
    the noise."""
    one_sigma = noise.domain == "additive" or not problem.sweep.is_complex
    if first.result is not None and one_sigma and not noise.stated:
        result = first.result
        result.chisqr = result.chisqr / noise.sigma**2
    else:
        result = problem.minimize(first, noise, scale_covar=not noise.stated)
    if result.success and result.covar is None:
        result.covar = problem.covariance_at(result, first.used, noise)
        result.errorbars = result.covar is not None
    if not result.success or result.covar is None:
        raise FitError(
            f"the fit did not converge ({result.message})",
            remedy="check the setup values and that the sweep covers the resonance",
            path=problem.sweep.source,
        )
    return _to_result(problem, result, first, noise, judged)


def _to_result(problem, result, first: FirstPass, noise: Noise, judged: list) -> CircuitFit:
    quantities, undetermined, determined, covariance = _quantities(problem, result, first, noise)
    problem.check_inside(quantities["f0"].value, "the fitted resonance")
    used = first.used
    a, b = problem.raw_residual(result.params.valuesdict(), used, noise.domain)
    if noise.domain == "relative":
        rms, rms_unit = float(np.sqrt(np.mean(a**2)) * DB_PER_NEPER), "dB"
    else:
        mag = np.abs(a + 1j * b) if b is not None else np.abs(a)
        rms = float(np.sqrt(np.mean(mag**2)))
        rms_unit = {"volts": "V", "impedance": "ohm"}.get(problem.sweep.kind, "")
    chi2 = float(result.chisqr)
    n, k = int(result.ndata), int(result.nvarys)
    redchi = chi2 / max(result.nfree, 1)
    judged = judged + fit_warnings(problem, result, redchi, quantities, first, noise)
    quantities = _mark_doubtful(quantities, judged)
    inside = points_in_band(problem, quantities, used)
    if needs_bootstrap(quantities, inside is not None and inside < MIN_POINTS_IN_BAND):
        quantities = _with_intervals(problem, result, used, noise, quantities)
        judged.append(
            (
                f"the linearised errors are doubtful here (few points in the band or a weak "
                f"peak): intervals from a seeded parametric bootstrap of {REPLICATES} refits "
                "are shown, and each uncertainty is at least half that interval; a sweep "
                "with more points in the half-power band fixes it (fitkit plan says where)",
                None,
            )
        )
    stats = FitStats(
        points=problem.sweep.points,
        used_points=int(used.size),
        redchi=redchi,
        rms=rms,
        rms_unit=rms_unit,
        # as lmfit defines them, from the chi-square against the noise
        aic=n * math.log(chi2 / n) + 2 * k,
        bic=n * math.log(chi2 / n) + k * math.log(n),
        converged=bool(result.success and result.errorbars),
        noise=noise.describe(problem.sweep.kind),
        start=first.start.method,
        outliers_hz=[float(x) for x in problem.f[first.outliers]],
        outlier_reasons=list(first.outlier_reasons),
        warnings=[text for text, _ in judged],
    )
    fit = CircuitFit(
        topology=problem.topology.name,
        quantities=quantities,
        covariance_names=determined,
        covariance=covariance,
        stats=stats,
        setup=problem.setup.to_dict(),
        sweep=_sweep_info(problem),
        known={k: {"value": v, "u": s} for k, (v, s) in problem.known.items()},
        undetermined=undetermined,
    )
    fit.model_curve = (problem.f, problem.data, problem.model(result.params.valuesdict()))
    return fit


#: a bootstrap interval wider than this share of the value marks it doubtful
_POORLY_PINNED = 0.6


def _with_intervals(problem, result, used, noise, quantities: dict) -> dict:
    """68 % bootstrap intervals on every determined value; the sweep's share of an error
    no less than half of one, the fixture's share added to it."""
    names = [n for n, q in quantities.items() if q.determined]
    found = intervals(
        problem, result.params.valuesdict(), varied(result.params), used, noise, names
    )
    out = dict(quantities)
    for name, (low, high) in found.items():
        q = out[name]
        low, high = min(low, q.value), max(high, q.value)
        doubtful = q.doubtful
        fixture = math.sqrt(max(q.stderr**2 - q.own_u**2, 0.0))
        own = max(q.own_u, 0.5 * (high - low))
        u = math.hypot(own, fixture)
        if not doubtful and high - low > _POORLY_PINNED * abs(q.value):
            # a spread this wide is not a normal error bar: the estimate is lopsided
            doubtful = (
                f"poorly pinned by this sweep: its 68% interval runs from "
                f"{format_to(low, q.unit, u)} to {format_to(high, q.unit, u)}"
            )
        out[name] = dataclasses.replace(
            q,
            interval=(low, high),
            stderr=u,
            doubtful=doubtful,
            u_sweep=None if q.u_sweep is None else own,
        )
    for name in set(names) - set(found):
        q = out[name]
        if not q.doubtful and q.stderr > 0.5 * _POORLY_PINNED * abs(q.value):
            # too few refits gave it a value at all (a loss that came out below zero)
            out[name] = dataclasses.replace(q, doubtful="not resolved by this sweep")
    return out


def _mark_doubtful(quantities: dict, judged: list) -> dict:
    """Each warning that undermines values marks them doubtful, with its reason."""
    out = dict(quantities)
    for text, affected in judged:
        if not affected:
            continue
        names = out if affected == "all" else [n for n in affected if n in out]
        for name in names:
            q = out[name]
            if q.determined and not q.doubtful:
                out[name] = dataclasses.replace(q, doubtful=text)
    return out


def _quantities(problem: FitProblem, result, first: FirstPass, noise: Noise) -> tuple:
    """Quantities with their standard errors (the fixture's stated uncertainties
    included), the undetermined ones with the reason, the covariance of the determined
    ones (:mod:`fitkit.propagation`, :mod:`fitkit.setup_uncertainty`); each keeps the
    sweep's own share of its error when the fixture's is in it."""
    values, names = result.params.valuesdict(), varied(result.params)
    fixture = setup_rows(problem, values, names, first.used, noise)
    carried = Propagated(problem, values, names, result.covar, fixture)
    null_dirs = first.null_dirs
    scale_open = bool(null_dirs) and not problem.known
    on_open_scale = depending_on(problem, values, "lnscale") if scale_open else set()
    quantities, undetermined, kept = {}, [], []
    for name in QUANTITIES:
        if name in OPTIONAL and name not in carried.values:
            continue
        if name not in carried.values or name in on_open_scale:
            reason, remedy = _why_undetermined(name in on_open_scale or scale_open)
            quantities[name] = Quantity(name, None, None, reason)
            undetermined.append({"name": name, "reason": reason, "remedy": remedy})
            continue
        kept.append(name)
        own = carried.std_dev(name, inputs=False) if fixture else None
        quantities[name] = Quantity(name, carried.values[name], carried.std_dev(name), u_sweep=own)
    return quantities, undetermined, kept, carried.covariance(kept)


def _why_undetermined(scale_open: bool) -> tuple:
    if scale_open:
        return (
            "an uncalibrated sweep fixes only f0 and the Q it shows; nothing ties its "
            "scale to ohms",
            "give the generator amplitude or a calibrated ratio with the sense resistor, "
            "or one known value (e.g. --known L=100u from an LCR meter)",
        )
    return (
        "the circuit loss R is not resolved above zero, so Q and the circuit's own "
        "bandwidth are unbounded",
        "check the fixture resistances in the setup, or measure with less resistance "
        "in the loop (a smaller sense resistor, an impedance analyser)",
    )


def _sweep_info(problem: FitProblem) -> dict:
    sweep, f = problem.sweep, problem.f
    info = {
        "source": sweep.source,
        "points": sweep.points,
        "f_min_hz": float(f[0]),
        "f_max_hz": float(f[-1]),
        "kind": sweep.kind,
        "complex": sweep.is_complex,
        "recorded_in_db": sweep.recorded_in_db,
        "notes": list(sweep.notes),
        "metadata": {str(k): str(v) for k, v in sweep.metadata.items()},
    }
    if getattr(sweep, "sha256", None):  # hashed once, by the reader
        info["sha256"] = sweep.sha256
    return info
