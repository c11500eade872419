"""What the data support: which circuit, which bench terms, which noise model.

Each choice compares fits of the same points by the Bayesian information criterion with
the noise level unknown, ``n ln(RSS / n) + k ln n`` (Schwarz, Ann. Stat. 6, 1978); a
difference under 10 is not taken as evidence (Kass & Raftery, J. Am. Stat. Assoc. 90,
1995: "very strong" above 10, from memory), and the simpler model is kept.

- circuit: series R-L-C, tank, coil with self-capacitance, and each of them with a loss
  growing as sqrt(f) (started from the plain one's solution);
- bench terms (:mod:`fitkit.nuisance`): each applicable term is tried on the chosen
  circuit and kept while it lowers the criterion by more than 10;
- noise: even (additive) or in proportion to the reading (relative), decided by
  :func:`fitkit.noise.relative_evidence` unless the user stated a noise.
"""

from __future__ import annotations

import math

import numpy as np

from fitkit.adequacy import check_structure
from fitkit.errors import FitError
from fitkit.noise import RELATIVE_EVIDENCE, Noise, relative_evidence
from fitkit.nuisance import PARAMETER, applicable
from fitkit.problem import UNIT_NOISE, FirstPass, FitProblem, varied
from fitkit.topologies import TOPOLOGIES
from fitkit.units import format_quantity

EVIDENCE = 10.0
_LOOSE = 0.05  # the level at which residuals are worth a bench-term trial
_PLAIN = ("series", "tank", "coil")
#: how a model is named in words
_WORDS = {
    "series": "the series circuit",
    "series-sqrtf": "the series circuit with a loss growing as sqrt(f)",
    "tank": "the tank",
    "coil": "the coil with self-capacitance",
    "tank-sqrtf": "the tank with a loss growing as sqrt(f)",
    "coil-sqrtf": "the coil with a loss growing as sqrt(f)",
}


def bic(problem: FitProblem, first: FirstPass, idx) -> float:
    """The criterion with the noise level unknown, on the points ``idx``."""
    r = problem.residual_values(
        first.params.valuesdict(), idx, Noise(first.domain, UNIT_NOISE, UNIT_NOISE)
    )
    n = r.size
    rss = max(float(np.sum(r**2)), 1e-300 * n)
    return n * math.log(rss / n) + len(varied(first.params)) * math.log(n)


def choose_topology(sweep, setup, known, domain: str, keep_outliers: bool) -> tuple:
    """Fit every candidate circuit; the winner's problem, first pass and the reason."""
    trials, failed = {}, {}
    for name in _PLAIN:
        problem = FitProblem(sweep, setup, TOPOLOGIES[name], known)
        problem.forced = False  # the model is being chosen, not imposed
        try:
            # each candidate with the bench terms it earns: a circuit must not win by
            # mimicking a bench's delay or floor
            problem, first = add_bench_terms(
                *_with(problem, problem.first_pass(domain, keep_outliers))
            )
            trials[name] = (problem, first)
            grown = FitProblem(
                sweep, setup, TOPOLOGIES[f"{name}-sqrtf"], known, problem.bench.terms
            )
            grown.forced = False
            params = first.params.copy()
            params.add("ln_skin", value=0.0, min=-9.0, max=9.0)
            trials[grown.topology.name] = _with(grown, grown.refine(first, params))
        except FitError as exc:
            failed.setdefault(name, exc)
        except (ArithmeticError, ValueError, np.linalg.LinAlgError) as exc:
            failed.setdefault(name, FitError(f"numerical failure: {exc}"))
    if not trials:
        raise _no_model_fits(sweep, failed)
    common = np.arange(sweep.points)
    for _, first in trials.values():
        common = np.intersect1d(common, first.used)
    score = {name: bic(problem, first, common) for name, (problem, first) in trials.items()}
    ranked = sorted(score, key=score.get)
    winner = ranked[0]
    close = [n for n in ranked[1:] if score[n] - score[winner] < EVIDENCE]
    winner = min([winner, *close], key=lambda n: len(TOPOLOGIES[n].extras))
    # a richer version of the one reported that does no better is not a rival
    family = TOPOLOGIES[winner].family
    rivals = []  # the best of each other family
    for n in ranked:
        if TOPOLOGIES[n].family not in {family, *(TOPOLOGIES[r].family for r in rivals)}:
            rivals.append(n)
    close = [n for n in rivals if score[n] - score[winner] < EVIDENCE]
    if close:
        text = (
            f"{_WORDS[winner]} fits as well as {' or '.join(_WORDS[n] for n in close)} "
            "(no clear evidence either way); the simpler is reported"
        )
    else:
        text = f"{_WORDS[winner]} fits the sweep best"
        if rivals:
            text += f"; {_WORDS[rivals[0]]} {_margin_words(score[rivals[0]] - score[winner])}"
    if failed:
        text += f"; {' and '.join(_WORDS[n] for n in failed)} cannot fit it"
    problem, first = trials[winner]
    return problem, first, text, {n: score[n] - score[winner] for n in score}


def _with(problem: FitProblem, first: FirstPass) -> tuple:
    """The pair, once its resonance is seen to lie inside the sweep."""
    problem.check_inside(math.exp(first.params["lnf0"].value), "the fitted resonance")
    return problem, first


def _margin_words(delta: float) -> str:
    if delta > 100:
        return "fits far worse"
    return "fits clearly worse (evidence very strong)"


def _no_model_fits(sweep, failed: dict) -> FitError:
    outside = [e for e in failed.values() if getattr(e, "outside", None)]
    if outside and len(outside) == len(failed):
        # every reading puts the resonance outside: say it as the series circuit reads it,
        # and how the tank would
        first = failed.get("series", outside[0])
        others = [
            f"as {_WORDS[n]}, {e.outside} {format_quantity(e.bound_hz, 'Hz')}"
            for n, e in failed.items()
            if n != "series" and getattr(e, "outside", None) != first.outside
        ]
        text = first.message + (f" ({'; '.join(others[:1])})" if others else "")
        error = FitError(text, remedy=first.remedy, path=sweep.source)
        error.outside, error.bound_hz = first.outside, first.bound_hz
        return error
    reasons = "; ".join(f"{n}: {e.message}" for n, e in failed.items())
    return FitError(
        f"no circuit model fits this sweep ({reasons})",
        remedy="check the setup values and that the sweep covers the resonance",
        path=sweep.source,
    )


def choose_noise_domain(problem: FitProblem, first: FirstPass, default: str) -> tuple:
    """Even or proportional noise, by the evidence of the first pass's residuals."""
    idx = first.used
    model = problem.model(first.params.valuesdict(), idx)
    data = problem.data[idx]
    if not np.iscomplexobj(data):
        model = np.abs(model)
    evidence = relative_evidence(model, data)
    if evidence > RELATIVE_EVIDENCE:
        domain = "relative"
    elif evidence < -RELATIVE_EVIDENCE:
        domain = "additive"
    else:
        domain = default
    if domain == first.domain:
        return first, evidence
    return problem.refine(first, first.params.copy(), domain), evidence


def add_bench_terms(problem: FitProblem, first: FirstPass) -> tuple:
    """Switch on the bench terms that earn their place, one at a time. Only residuals
    with some order in them (runs or slow waves at a loose 5 % level) can hide a term
    worth 10 in the criterion, so a sweep whose residuals look white is spared the
    trials."""
    if not _has_structure(problem, first):
        return problem, first
    current, current_first = problem, first
    score = bic(problem, first, first.used)
    remaining = [t for t in applicable(problem.sweep, problem.setup)]
    while remaining:
        tried = {}
        for term in remaining:
            trial = current.with_terms((*current.bench.terms, term))
            params = current_first.params.copy()
            values = params.valuesdict()
            model = current.model(values, first.used)
            start = trial.bench.start(term, problem.f[first.used], model, problem.data[first.used])
            low, high = trial.bounds[PARAMETER[term]]
            params.add(PARAMETER[term], value=start, min=low, max=high)
            try:
                refined = trial.refine(current_first, params)
            except (ArithmeticError, ValueError, np.linalg.LinAlgError):
                continue
            tried[term] = (trial, refined, bic(trial, refined, first.used))
        if not tried:
            break
        best = min(tried, key=lambda t: tried[t][2])
        if tried[best][2] > score - EVIDENCE:
            break
        current, current_first, score = tried[best]
        remaining.remove(best)
    return current, current_first


def resonance_evidence(problem: FitProblem, first: FirstPass) -> float:
    """By how much the circuit explains the sweep better than a straight line in ln f
    (complex where the data are), in the criterion's units: a flat or sloping reading
    shows no resonance, however small the error bars of a circuit forced through it."""
    idx = first.used
    d = problem.data[idx]
    x = np.log(problem.f[idx] / problem.f[idx][0])
    if first.domain == "relative":
        with np.errstate(divide="ignore"):
            y = np.log(d) if np.iscomplexobj(d) else np.log(np.abs(d))
    else:
        y = d
    design = np.column_stack([np.ones_like(x), x]).astype(y.dtype)
    if problem.spread is not None:  # weighted as the circuit's criterion is
        y, design = y / problem.spread[idx], design / problem.spread[idx][:, None]
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    r = y - design @ coef
    r = np.concatenate([r.real, r.imag]) if np.iscomplexobj(r) else r
    if not np.all(np.isfinite(r)):
        return np.inf
    n, k = r.size, 2 * (2 if np.iscomplexobj(d) else 1)
    line = n * math.log(max(float(np.sum(r**2)), 1e-300 * n) / n) + k * math.log(n)
    return line - bic(problem, first, idx)


def _has_structure(problem: FitProblem, first: FirstPass) -> bool:
    a, b = problem.scaled_residual(first.params.valuesdict(), first.used, first.domain)
    return bool(check_structure({"magnitude": a, "phase": b}, alpha=_LOOSE))
