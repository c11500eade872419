"""The fit's engine against a plain least-squares solve by a general library.

scipy.optimize.least_squares (Levenberg-Marquardt) fits ln R, ln L, ln C of a series
circuit through the same bench relation, with its own Jacobian written here; its
covariance is (J^T J)^-1 times the residual variance, the textbook least-squares
covariance with the noise estimated (e.g. Press et al., Numerical Recipes, 3rd ed.,
section 15.5). fit_sweep, through its own parametrisation, closed-form Jacobian, lmfit
pass and propagation to R, L and C, must land on the same minimum with the same
standard errors (to 1e-6 of a standard error).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import least_squares

from fitkit.circuits import TWO_PI, series_rlc
from fitkit.fitting import fit_sweep
from tests.synthetic import SETUPS, TRUTH, make_sweep


def plain_solve(sweep, setup):
    f, d = sweep.freq_hz, sweep.values
    w = TWO_PI * f
    a, b, c, dd = setup.coefficients(f)

    def parts(x):
        r, l_h, c_f = np.exp(x)
        z = series_rlc(f, r, l_h, c_f)
        return (a * z + b) / (c * z + dd), (a * dd - b * c) / (c * z + dd) ** 2, (r, l_h, c_f)

    def resid(x):
        m = parts(x)[0] - d
        return np.concatenate([m.real, m.imag])

    def jac(x):
        _, slope, (r, l_h, c_f) = parts(x)
        cols = slope[:, None] * np.column_stack([r + 0 * w, 1j * w * l_h, 1j / (w * c_f)])
        return np.concatenate([cols.real, cols.imag])

    x0 = np.log([TRUTH["R"] * 1.3, TRUTH["L"] * 0.9, TRUTH["C"] * 1.1])
    sol = least_squares(resid, x0, jac=jac, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    j = jac(sol.x)
    cov = np.linalg.inv(j.T @ j) * np.sum(sol.fun**2) / (sol.fun.size - 3)
    values = np.exp(sol.x)
    return dict(zip("RLC", values)), dict(zip("RLC", values * np.sqrt(np.diag(cov))))


@pytest.mark.parametrize("points", [201, 1001])
@pytest.mark.parametrize(
    "setup_name", ["divider-terminal", "reflection", "volts", "series-through"]
)
def test_same_minimum_and_errors_as_a_plain_solve(setup_name, points):
    setup = SETUPS[setup_name]
    sweep = make_sweep(setup, seed=11, points=points)
    fit = fit_sweep(sweep, setup, topology="series", noise="additive")
    values, errors = plain_solve(sweep, setup)
    for name in "RLC":
        q = fit.quantities[name]
        assert abs(q.value - values[name]) < 1e-6 * errors[name], name
        # ln x carries the error of x as x * (error of ln x), to first order
        assert q.stderr == pytest.approx(errors[name], rel=1e-6), name
