"""Placement by Fisher information agrees with the planner's analytic Cramer-Rao bound."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.circuits import TWO_PI
from fitkit.instruments.placement import InformationModel
from fitkit.noise import Noise
from fitkit.plan import cramer_rao, resonance
from fitkit.setups import Setup


@pytest.mark.parametrize("target", ["Q", "L", "C", "R", "f0"])
def test_numerical_bound_matches_the_analytic_bound_of_plan(target):
    # plan.cramer_rao differentiates the series model analytically (Kay 1993, ch. 3);
    # the placement's central differences must give the same bound
    setup = Setup("divider", "ratio", sense_ohm=47.0)
    r, ind, c = 10.0, 220e-6, 1e-9
    f = np.linspace(250e3, 450e3, 41)
    sigma = 1e-3
    ref = cramer_rao(setup, f, r, ind, c, Noise("additive", sigma)).relative(target)
    f0, ql = resonance(setup, r, ind, c)
    model = InformationModel("series", setup, f0, ql, r + setup.external_ohm, target)
    got = model.relative_bound(model.information(f, np.full(f.size, sigma)))
    assert got == pytest.approx(ref, rel=1e-4)


def test_points_go_near_the_resonance_and_lower_the_bound():
    setup = Setup("across", "ratio", feed_ohm=10e3)
    ind, c, r = 100e-6, 2.2e-9, 3.0
    f0 = 1 / (TWO_PI * math.sqrt(ind * c))
    q = TWO_PI * f0 * ind / r
    model = InformationModel("tank", setup, f0, q, ind / (r * c), "Q")
    taken = np.geomspace(100e3, 1e6, 21)
    sigma = np.full(taken.size, 1e-3)
    before = model.relative_bound(model.information(taken, sigma))
    chosen = model.next_frequencies(taken, sigma, 4)
    after = model.relative_bound(
        model.information(np.r_[taken, chosen], np.full(taken.size + 4, 1e-3))
    )
    assert after < before
    # within a few loaded bandwidths of f0, where the response changes with Q
    width = f0 / model.loaded_q()
    assert all(abs(f - f0) < 6 * width for f in chosen)
