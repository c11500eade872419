"""Does the model describe the sweep? Judged from the residuals' pattern, not their size.

A misfit hides easily when the noise is estimated from the same residuals: the estimate
swallows it and the reduced chi-square sits near 1. What a misfit cannot hide is order:
residuals of a good model are independent from one point to the next, a wrong model
leaves them in long runs of one sign and slow waves across the sweep. Each check below
works on residuals in frequency order and does not depend on the noise level:

- the runs test (Wald & Wolfowitz, Ann. Math. Statist. 11, 1940): too few runs of one
  sign for the number of positive and negative residuals;
- the cumulative periodogram (Durbin, Biometrika 56, 1969; Box & Jenkins, Time Series
  Analysis, 1970, the "cumulative periodogram check"): white residuals spread their
  power evenly over frequency, so the normalised cumulative periodogram stays near the
  diagonal; its largest distance is judged with the Kolmogorov distribution;
- for complex readings weighted as one circle: the residual's radial part (magnitude)
  and its tangential part (phase) must scatter alike; an F test on their variances.

Each test is run at a small significance level (``ALPHA``, shared out over the tests),
so a model that fits is flagged about once in a few hundred clean sweeps.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

#: the chance that a clean sweep is flagged by any one fit's set of tests
ALPHA = 2e-3
_MIN_POINTS = 20


@dataclass(frozen=True)
class Finding:
    """One failed check: what it found, and its p-value."""

    test: str
    text: str
    p_value: float


def runs_p_value(r: np.ndarray) -> float:
    """One-sided p-value of too few runs of one sign (Wald & Wolfowitz 1940)."""
    signs = r[r != 0] > 0
    n = signs.size
    n_pos = int(signs.sum())
    n_neg = n - n_pos
    if n_pos == 0 or n_neg == 0:
        return 0.0 if n >= _MIN_POINTS else 1.0
    runs = 1 + int(np.sum(signs[1:] != signs[:-1]))
    mean = 2.0 * n_pos * n_neg / n + 1.0
    var = (mean - 1.0) * (mean - 2.0) / (n - 1.0)
    if var <= 0:
        return 1.0
    return float(special.ndtr((runs - mean) / math.sqrt(var)))  # the normal cdf


def periodogram_p_value(r: np.ndarray) -> float:
    """p-value of the cumulative periodogram's largest distance from the diagonal."""
    n = r.size
    power = np.abs(np.fft.rfft(r - r.mean()))[1:] ** 2
    m = (n - 1) // 2
    power = power[:m]
    total = power.sum()
    if m < 4 or total <= 0:
        return 1.0
    cumulative = np.cumsum(power)[:-1] / total
    line = np.arange(1, m) / m
    distance = float(np.max(np.abs(cumulative - line)))
    q = m - 1
    # Kolmogorov's limit distribution with the small-sample correction of Stephens
    # (J. R. Statist. Soc. B 32, 1970): sqrt(q) + 0.12 + 0.11/sqrt(q)
    scaled = distance * (math.sqrt(q) + 0.12 + 0.11 / math.sqrt(q))
    return float(special.kolmogorov(scaled))


def variance_ratio_p_value(radial: np.ndarray, tangential: np.ndarray) -> tuple:
    """Two-sided F test that magnitude and phase residuals share one variance."""
    va, vb = float(np.mean(radial**2)), float(np.mean(tangential**2))
    if va <= 0 or vb <= 0:
        return 1.0, 1.0
    ratio = va / vb
    n = radial.size
    # the F distribution's upper and lower tails
    tail = special.fdtrc(n, n, ratio) if ratio > 1 else special.fdtr(n, n, ratio)
    return float(min(1.0, 2.0 * tail)), ratio


def check_structure(parts: dict, alpha: float = ALPHA) -> list:
    """Runs and periodogram tests on each residual part (``{"magnitude": r, ...}``)."""
    parts = {k: v for k, v in parts.items() if v is not None and v.size >= _MIN_POINTS}
    if not parts:
        return []
    level = alpha / (2 * len(parts) + 1)
    found = []
    for name, r in parts.items():
        p_runs = runs_p_value(r)
        if p_runs < level:
            found.append(
                Finding(
                    "runs",
                    f"the {name} residuals run in long stretches of one sign "
                    f"(runs test p = {p_runs:.1g})",
                    p_runs,
                )
            )
        p_cum = periodogram_p_value(r)
        if p_cum < level:
            found.append(
                Finding(
                    "periodogram",
                    f"the {name} residuals follow a slow pattern across the sweep "
                    f"(cumulative periodogram p = {p_cum:.1g})",
                    p_cum,
                )
            )
    return found


def check_circle(radial: np.ndarray, tangential: np.ndarray, parts: int = 1) -> list:
    """The F test of magnitude against phase scatter, for one-circle weighting."""
    if radial.size < _MIN_POINTS:
        return []
    level = ALPHA / (2 * parts + 1)
    p, ratio = variance_ratio_p_value(radial, tangential)
    if p >= level:
        return []
    larger = "magnitude" if ratio > 1 else "phase"
    return [
        Finding(
            "circle",
            f"the {larger} residuals scatter {max(ratio, 1 / ratio):.2g} times more (in "
            f"variance) than the other part (F test p = {p:.1g}): one noise level does not "
            "describe both; state them apart, e.g. --noise 0.05dB,0.3deg",
            p,
        )
    ]
