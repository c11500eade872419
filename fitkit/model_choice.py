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
from fitkit.estimate import resonance_side
from fitkit.noise import RELATIVE_EVIDENCE, Noise, relative_evidence
from fitkit.nuisance import NEUTRAL, PARAMETER, applicable
from fitkit.problem import UNIT_NOISE, FirstPass, FitProblem
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


def criterion(r: np.ndarray, k: int) -> float:
    """``n ln(RSS / n) + k ln n`` of the residuals ``r`` with ``k`` free parameters."""
    n = r.size
    rss = max(float(np.sum(r**2)), 1e-300 * n)
    return n * math.log(rss / n) + k * math.log(n)


def bic(problem: FitProblem, first: FirstPass, idx) -> float:
    """The criterion with the noise level unknown, on the points ``idx``."""
    r = problem.residual_values(first.values, idx, Noise(first.domain, UNIT_NOISE, UNIT_NOISE))
    return criterion(r, len(first.free))


def choose_topology(sweep, setup, known, domain: str, keep_outliers: bool) -> tuple:
    """Fit every candidate circuit; the winner's problem, first pass and the reason.

    A richer circuit that contains a plainer one already fitted (the coil contains the
    series circuit, each sqrt(f) loss its plain circuit) is first screened from the
    plainer one's fit (:func:`_screened_score`) and fitted only when it could win."""
    trials, failed, screened = {}, {}, {}
    # a candidate whose reading still falls at an end has no resonance inside: refused
    # before any search
    beyond = {n: resonance_side(sweep, setup, TOPOLOGIES[n], strict=True) for n in _PLAIN}
    for name in _PLAIN:
        try:
            if name == "coil" and _screened(screened, trials, "series", TOPOLOGIES[name]):
                continue
            problem = FitProblem(sweep, setup, TOPOLOGIES[name], known)
            problem.forced = False  # the model is being chosen, not imposed
            if beyond[name]:
                raise problem.outside_error(beyond[name], "the resonance")
            # the series circuit is the only one fitted in full when the tank is refused
            # (the coil is screened from it): its first solve may stand as the last
            problem.may_keep_first = name == "series" and bool(beyond["tank"])
            # each candidate with the bench terms it earns: a circuit must not win by
            # mimicking a bench's delay or floor
            problem, first = add_bench_terms(
                *_with(problem, problem.first_pass(domain, keep_outliers))
            )
            trials[name] = (problem, first)
            grown = TOPOLOGIES[f"{name}-sqrtf"]
            if _screened(screened, trials, name, grown):
                continue
            grown_problem = problem.with_terms(problem.bench.terms, grown)
            values = {**first.values, "ln_skin": 0.0}
            trials[grown.name] = _with(
                grown_problem, grown_problem.refine(first, values, (*first.free, "ln_skin"))
            )
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
    # a screened circuit scores as its plainer one plus the change the screen predicted:
    # never better by EVIDENCE, so the plainer one is reported, as when both were fitted
    score.update({n: score[base] + change for n, (base, change) in screened.items()})
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


#: a screened candidate is fitted when its predicted criterion comes within this of winning
_SCREEN_MARGIN = 0.5 * EVIDENCE


def _nearly_off(extra: str, problem: FitProblem) -> float:
    """Where a richer circuit's extra parameter is all but switched off: a
    self-resonance e^4 (55) times above the sweep, a growing loss e^-6 of the loss."""
    return math.log(problem.f[-1]) + 4.0 if extra == "f_self" else -6.0


def _screened(screened: dict, trials: dict, base: str, topology) -> bool:
    """Whether ``topology`` cannot win over the fitted circuit ``base`` (then it is not
    fitted, and the criterion change the screen predicts is kept in ``screened``)."""
    if base not in trials:
        return False
    problem, first = trials[base]
    change = _screened_score(problem, first, topology) - bic(problem, first, first.used)
    if change > _SCREEN_MARGIN - EVIDENCE:
        screened[topology.name] = (base, change)
        return True
    return False


def _screened_score(problem: FitProblem, first: FirstPass, topology) -> float:
    """The criterion the richer circuit ``topology`` could reach from the plainer one's
    fit (see :func:`_predicted_criterion`), its extra parameter all but switched off."""
    extra = {
        f"ln_{name}": _nearly_off(name, problem)
        for name in topology.extras
        if f"ln_{name}" not in first.values
    }
    return _predicted_criterion(problem.with_terms(problem.bench.terms, topology), first, extra)


def _predicted_criterion(richer: FitProblem, first: FirstPass, extra: dict) -> float:
    """The criterion a richer model could reach from a plainer one's fit by one
    Gauss-Newton step, its extra parameters set where they (all but) vanish: the score
    (Lagrange multiplier) test of those parameters (Rao, Proc. Camb. Phil. Soc. 44,
    1948; for least squares the regression of the residuals on the full Jacobian, e.g.
    Seber & Wild, Nonlinear Regression, 1989, sec. 5.9, from memory). It predicts the
    fit's gain well when the extra term is small, which is when it cannot win; a large
    predicted gain sends the richer model to a full fit."""
    values = {**first.values, **extra}
    free = (*first.free, *extra)
    unit = Noise(first.domain, UNIT_NOISE, UNIT_NOISE)
    r = richer.residual_values(values, first.used, unit)
    jac = richer.jacobian(values, list(free), first.used, unit)
    step, *_ = np.linalg.lstsq(jac, -r, rcond=None)
    return criterion(r + jac @ step, len(free))


def _with(problem: FitProblem, first: FirstPass) -> tuple:
    """The pair, once its resonance is seen to lie inside the sweep."""
    problem.check_inside(math.exp(first.values["lnf0"]), "the fitted resonance")
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
    model = problem.model(first.values, idx)
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
    return problem.in_domain(first, domain), evidence


def add_bench_terms(problem: FitProblem, first: FirstPass) -> tuple:
    """Switch on the bench terms that earn their place, one at a time. Only residuals
    with some order in them (runs or slow waves at a loose 5 % level) can hide a term
    worth 10 in the criterion, so a sweep whose residuals look white is spared the
    trials; a term the score test says cannot earn it is not tried either."""
    if not _has_structure(problem, first):
        return problem, first
    current, current_first = problem, first
    score = bic(problem, first, first.used)
    remaining = [t for t in applicable(problem.sweep, problem.setup)]
    while remaining:
        tried = {}
        for term in remaining:
            trial = current.with_terms((*current.bench.terms, term))
            neutral = {PARAMETER[term]: NEUTRAL[PARAMETER[term]]}
            if _predicted_criterion(trial, current_first, neutral) > score - _SCREEN_MARGIN:
                continue
            values = current_first.values
            model = current.model(values, first.used)
            start = trial.bench.start(term, problem.f[first.used], model, problem.data[first.used])
            values = {**values, PARAMETER[term]: start}
            try:
                refined = trial.refine(
                    current_first, values, (*current_first.free, PARAMETER[term])
                )
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
    # the straight line by (weighted) least squares in closed form, weighted as the
    # circuit's criterion is when the points carry their own sigmas
    spread = np.ones_like(x) if problem.spread is None else problem.spread[idx]
    weight = 1.0 / spread**2
    xc = x - np.dot(weight, x) / weight.sum()
    slope = np.dot(weight * xc, y) / max(float(np.dot(weight * xc, xc)), 1e-300)
    r = (y - np.dot(weight, y) / weight.sum() - slope * xc) / spread
    r = np.concatenate([r.real, r.imag]) if np.iscomplexobj(r) else r
    if not np.all(np.isfinite(r)):
        return np.inf
    line = criterion(r, 2 * (2 if np.iscomplexobj(d) else 1))
    return line - bic(problem, first, idx)


def _has_structure(problem: FitProblem, first: FirstPass) -> bool:
    a, b = problem.scaled_residual(first.values, first.used, first.domain)
    return bool(check_structure({"magnitude": a, "phase": b}, alpha=_LOOSE))
