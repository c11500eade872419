"""The closed-form Jacobian against central differences of the residual itself.

The reference is the textbook central difference (error O(h^2); e.g. Press et al.,
Numerical Recipes, 3rd ed., section 5.7), taken on the same residual function the fit
minimises, for every topology, bench, bench term and noise domain.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.estimate import estimate_start
from fitkit.noise import Noise
from fitkit.nuisance import PARAMETER, applicable
from fitkit.problem import FitProblem
from fitkit.setups import Setup
from fitkit.topologies import TOPOLOGIES
from tests.synthetic import SETUPS, make_sweep

EXTRA_SETUPS = {
    "across": Setup("across", "ratio", feed_ohm=1e3, probe_f=10e-12),
    "relative-shape": Setup("divider", "ratio", relative=True),
    "volts-uncalibrated": Setup("divider", "volts", sense_ohm=47.0),
}
ALL_SETUPS = {**SETUPS, **EXTRA_SETUPS}


def central(problem, values, names, idx, noise):
    cols = []
    for name in names:
        h = 1e-6 * max(1.0, abs(values[name]))
        up = problem.residual_values({**values, name: values[name] + h}, idx, noise)
        down = problem.residual_values({**values, name: values[name] - h}, idx, noise)
        cols.append((up - down) / (2 * h))
    return np.column_stack(cols)


def perturbed_parameters(problem, rng):
    """Internal values near the closed-form start, every bench term away from neutral."""
    start = estimate_start(problem.sweep, problem.setup, problem.topology)
    values = {
        "lnf0": math.log(start.f0_hz),
        "lnq": math.log(start.q),
        "lnscale": math.log(start.scale_ohm),
        **{f"ln_{e}": math.log(v) for e, v in start.extras.items()},
    }
    values = {k: v + 0.05 * rng.normal() for k, v in values.items()}
    for term in problem.bench.terms:
        name = PARAMETER[term]
        values[name] = {"delay_turns": 0.3, "tilt": 0.2, "ln_floor": -4.0}[name]
    values["gain"] = start.gain * 1.1
    names = [n for n in values if n != "gain" or not problem.setup.is_calibrated]
    names = [n for n in names if not (n == "lnscale" and problem.known)]
    return values, names


@pytest.mark.parametrize("topology", sorted(TOPOLOGIES))
@pytest.mark.parametrize("setup_name", sorted(ALL_SETUPS))
@pytest.mark.parametrize("complex_data", [True, False])
def test_closed_form_jacobian_matches_central_differences(topology, setup_name, complex_data):
    setup = ALL_SETUPS[setup_name]
    sweep = make_sweep(setup, seed=3, points=61, complex_data=complex_data, noise=1e-2)
    rng = np.random.default_rng(7)
    for terms in [(), applicable(sweep, setup)]:
        problem = FitProblem(sweep, setup, TOPOLOGIES[topology], {}, terms)
        values, names = perturbed_parameters(problem, rng)
        idx = np.arange(0, sweep.points, 2)  # a subset, as after dropping outliers
        for noise in (Noise("additive", 0.3), Noise("relative", 0.01, 0.02)):
            analytic = problem.jacobian(values, names, idx, noise)
            numeric = central(problem, values, names, idx, noise)
            # rounding in the differences: about eps |r| / h per column (h = 1e-6)
            rounding = 1e-8 * np.abs(problem.residual_values(values, idx, noise)).max()
            tolerance = 1e-5 * np.abs(numeric).max(axis=0) + rounding
            error = np.abs(analytic - numeric).max(axis=0)
            assert np.all(error <= tolerance), (names, terms, noise, error / tolerance)


def test_known_value_and_a_parameter_at_its_bound():
    setup = SETUPS["impedance"]
    sweep = make_sweep(setup, seed=1, points=41)
    problem = FitProblem(sweep, setup, TOPOLOGIES["series"], {"L": (100e-6, 0.0)})
    values, _ = perturbed_parameters(problem, np.random.default_rng(1))
    names = ["lnf0", "lnq"]
    idx = np.arange(sweep.points)
    noise = Noise("additive", 1.0)
    assert np.allclose(
        problem.jacobian(values, names, idx, noise),
        central(problem, values, names, idx, noise),
        rtol=1e-6,
        atol=1e-9 * math.sqrt(idx.size),
    )
    beyond = {**values, "lnq": problem.bounds["lnq"][1] + 1.0}  # the model clips it
    assert not problem.jacobian(beyond, names, idx, noise)[:, 1].any()
