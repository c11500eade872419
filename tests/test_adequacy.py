"""The model-adequacy checks and the noise-model choice, against their sources."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from fitkit.adequacy import (
    check_circle,
    check_structure,
    periodogram_p_value,
    runs_p_value,
    variance_ratio_p_value,
)
from fitkit.noise import relative_evidence


def _runs(signs) -> int:
    return 1 + sum(a != b for a, b in itertools.pairwise(signs))


def test_runs_mean_and_variance_match_exhaustive_enumeration():
    """Wald & Wolfowitz (Ann. Math. Statist. 11, 1940): for n1 and n2 signs the number of
    runs has mean 2 n1 n2 / n + 1 and variance (mean - 1)(mean - 2)/(n - 1). Checked by
    enumerating every arrangement of 6 plus and 5 minus signs (462 of them)."""
    n1, n2 = 6, 5
    n = n1 + n2
    counts = []
    for plus in itertools.combinations(range(n), n1):
        signs = [i in plus for i in range(n)]
        counts.append(_runs(signs))
    mean = 2 * n1 * n2 / n + 1
    assert np.mean(counts) == pytest.approx(mean, rel=1e-12)
    assert np.var(counts) == pytest.approx((mean - 1) * (mean - 2) / (n - 1), rel=1e-12)


def test_runs_test_tells_order_from_alternation():
    r = np.where(np.arange(60) < 30, 1.0, -1.0)  # two runs: a misfit's signature
    assert runs_p_value(r) < 1e-6
    assert runs_p_value(np.resize([1.0, -1.0], 60)) > 0.99  # alternation is not structure


def test_clean_residuals_are_flagged_at_the_stated_rate():
    """White Gaussian residuals: each test's false-alarm share stays near its level (the
    cumulative periodogram's Kolmogorov limit is conservative for short series; Durbin,
    Biometrika 56, 1969)."""
    rng = np.random.default_rng(11)
    runs, cum = [], []
    for _ in range(1000):
        r = rng.normal(size=201)
        runs.append(runs_p_value(r) < 0.05)
        cum.append(periodogram_p_value(r) < 0.05)
    assert 0.03 < np.mean(runs) < 0.07
    assert 0.01 < np.mean(cum) < 0.07


def test_a_slow_wave_under_the_noise_is_found():
    """A misfit half the noise in size (rms), spread over the sweep as slow waves, is
    invisible point by point and plain in the residuals' order."""
    rng = np.random.default_rng(12)
    x = np.linspace(0, 1, 1001)
    r = rng.normal(size=x.size) + 0.5 * np.sin(2 * np.pi * 3 * x) * math.sqrt(2)
    found = check_structure({"magnitude": r})
    assert found and found[0].test in ("runs", "periodogram")
    assert not check_structure({"magnitude": rng.normal(size=x.size)})


def test_magnitude_and_phase_scatter_compared_by_the_f_distribution():
    """The two-sided F test of two variances (any statistics text): equal scatter passes,
    a 3:1 variance ratio over 200 points does not."""
    rng = np.random.default_rng(13)
    a, b = rng.normal(size=200), rng.normal(size=200)
    p, ratio = variance_ratio_p_value(a, b)
    assert p > 0.01 and 0.5 < ratio < 2
    assert check_circle(math.sqrt(3) * a, b)
    assert not check_circle(a, b)


@pytest.mark.parametrize("complex_data", [True, False])
def test_the_noise_model_is_told_from_the_data(complex_data):
    """Even scatter and scatter in proportion to the reading, on one resonance curve."""
    rng = np.random.default_rng(14)
    f = np.linspace(0.5, 1.5, 301)
    m = 1 / (1 + 1j * 20 * (f - 1 / f))
    even = m + 0.01 * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    share = m * np.exp(0.01 * rng.normal(size=f.size) + 0.01j * rng.normal(size=f.size))
    pick = (lambda z: z) if complex_data else np.abs
    assert relative_evidence(pick(m), pick(even)) < -5
    assert relative_evidence(pick(m), pick(share)) > 5
