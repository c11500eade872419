"""Intervals from a seeded parametric bootstrap, where the linearised covariance is doubtful.

The covariance of a least-squares fit is the curvature at the minimum: right when the
model is nearly linear over the spread of the estimates, wrong when few points pin the
resonance (a sparse band) or the noise is large next to the resonance's signature (low
SNR); then the spread is lopsided (a Q is easier to overestimate than to underestimate
from three points in the band). A parametric bootstrap (Efron & Tibshirani, An
Introduction to the Bootstrap, 1993, ch. 6, from memory) draws new sweeps from the
fitted model with the noise found, refits each, and reads the 16th and 84th percentiles
of each reported value: a 68 % interval, asymmetric where the spread is. Seeded, so the
same sweep always gives the same interval.
"""

from __future__ import annotations

import numpy as np

from fitkit.noise import Noise

REPLICATES = 100
SEED = 20261202
#: the linearised standard error is doubtful above this share of its value
_RELATIVE_LIMIT = 0.1


def needs_bootstrap(quantities: dict, sparse: bool) -> bool:
    """A sparse band, or a Q known to worse than ``_RELATIVE_LIMIT`` by the sweep itself
    (a fixture's stated uncertainty adds no nonlinearity)."""
    if sparse:
        return True
    for name in ("Q_loaded", "Q"):
        q = quantities.get(name)
        if q is not None and q.determined and q.value > 0 and q.own_u > _RELATIVE_LIMIT * q.value:
            return True
    return False


def intervals(problem, values: dict, free, used, noise: Noise, names: list) -> dict:
    """``{name: (low, high)}``, 68 % intervals of the named values (see the module notes),
    from the internal ``values`` with the ``free`` ones refitted."""
    rng = np.random.default_rng(SEED)
    model = problem.model(values, used)
    if not problem.sweep.is_complex:
        model = np.abs(model)
    draws = {n: [] for n in names}
    spread = 1.0 if problem.spread is None else problem.spread[used]
    original = problem.data
    try:
        for _ in range(REPLICATES):
            problem.data = original.copy()
            problem.data[used] = _noisy(model, noise, rng, spread)
            try:
                trial, _ = problem.quick_minimize(values, free, used, noise)
            except (ArithmeticError, ValueError, np.linalg.LinAlgError):
                continue
            got = problem.reported(trial)
            for n in names:
                if got.get(n) is not None:
                    draws[n].append(float(got[n]))
    finally:
        problem.data = original
    out = {}
    for n, xs in draws.items():
        if len(xs) >= REPLICATES // 2:
            low, high = np.percentile(xs, [15.865, 84.135])
            out[n] = (float(low), float(high))
    return out


def _noisy(model: np.ndarray, noise: Noise, rng, spread) -> np.ndarray:
    """A draw of the model with the noise found (each point's spread times its level)."""
    n = model.size
    sigma = noise.sigma * spread
    if noise.domain == "additive":
        if np.iscomplexobj(model):
            return model + sigma * (rng.normal(size=n) + 1j * rng.normal(size=n))
        return model + sigma * rng.normal(size=n)
    if np.iscomplexobj(model):
        phase = (noise.sigma_phase_rad or noise.sigma) * spread
        return model * np.exp(sigma * rng.normal(size=n) + 1j * phase * rng.normal(size=n))
    return model * np.exp(sigma * rng.normal(size=n))
