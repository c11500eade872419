"""Propagated uncertainties against a seeded Monte Carlo of the fit's covariance."""

from __future__ import annotations

import numpy as np
import pytest

from fitkit.chain import chain_from_setup, rejection_db
from fitkit.fitting import fit_sweep
from fitkit.predict import Carrier, loss_limit, predict, values_from_fit
from fitkit.tuning import tuning_c
from tests.synthetic import SETUPS, make_sweep

SAMPLES = 4000


@pytest.fixture(scope="module")
def fit():
    setup = SETUPS["divider-terminal"]
    # a noisy sweep, so the error bars are wide enough to matter
    return fit_sweep(make_sweep(setup, seed=11, noise=2e-3), setup)


def draws(fit, seed: int) -> np.ndarray:
    names = list(fit.covariance_names)
    idx = [names.index(n) for n in ("R", "L", "C")]
    cov = np.asarray(fit.covariance)[np.ix_(idx, idx)]
    mean = [fit[n].value for n in ("R", "L", "C")]
    return np.random.default_rng(seed).multivariate_normal(mean, cov, size=SAMPLES)


@pytest.mark.parametrize("retune", [True, False])
def test_rejection_error_matches_monte_carlo(fit, retune):
    # Monte Carlo of the GUM law of propagation (JCGM 101:2008 supplement, from memory):
    # the linearised standard error should match the spread of the sampled rejections
    chain = chain_from_setup(fit.setup)
    wanted, unwanted = 500e3, 540e3
    p = predict(
        values_from_fit(fit), chain, wanted_hz=wanted, retune=retune, carriers=(Carrier(unwanted),)
    )
    propagated = p.carriers[0].rejection_db.std_dev
    sampled = []
    for r, l_h, c_f in draws(fit, seed=5):
        c_used = tuning_c(wanted, {"R": r, "L": l_h}, chain) if retune else c_f
        sampled.append(rejection_db(unwanted, wanted, {"R": r, "L": l_h, "C": c_used}, chain))
    assert propagated > 0
    assert propagated == pytest.approx(np.std(sampled, ddof=1), rel=0.05)


def test_loss_limit_error_matches_monte_carlo(fit):
    # same Monte Carlo check, for the largest R meeting 4 dB at +60 kHz (fitted C kept)
    chain = chain_from_setup(fit.setup)
    values = values_from_fit(fit)
    f0 = 1.0 / (2 * np.pi * np.sqrt(fit["L"].value * fit["C"].value))
    carriers = [Carrier(f0 + 60e3)]
    limit = loss_limit(values, f0, carriers, 4.0, chain)
    sampled = [
        loss_limit({"R": r, "L": l_h, "C": c_f}, f0, carriers, 4.0, chain).r_max_ohm
        for r, l_h, c_f in draws(fit, seed=8)[:1000]
    ]
    assert limit.r_max_ohm.std_dev == pytest.approx(np.std(sampled, ddof=1), rel=0.08)
