"""The model's derivatives in the fit's internal parameters, in closed form.

The reading is ``m = gain * bench(f) * response(Z(f))`` (:mod:`fitkit.setups`,
:mod:`fitkit.nuisance`), so by the chain rule

    dm/dp = gain * bench * response'(Z) * sum over elements e of dZ/de * de/dp

``dZ/de`` comes from each topology's :meth:`~fitkit.topologies.Topology.partials`;
``de/dp``, how R, L, C (and the coil's self-capacitance) move with ln f0, ln Q, the
scale and the extras, is a map of a handful of scalars, differentiated exactly by a
complex step (Squire & Trapp, SIAM Review 40, 1998: ``f'(x) = Im f(x + ih) / h`` with
no cancellation, for any ``h`` down to 1e-100) through the topology's own arithmetic.
The loss that grows as sqrt(f) is differentiated the same way. The result is exact to
rounding and costs a few array operations per parameter, where a finite-difference
Jacobian costs one model evaluation per parameter and loses half the digits.
"""

from __future__ import annotations

import cmath
import math

import numpy as np

from fitkit.circuits import TWO_PI

_STEP = 1e-100  # complex step
_CIRCUIT = ("lnf0", "lnq", "lnscale")


def circuit_state(problem, values: dict) -> tuple:
    """f0, Q, the scale resistance, the extras and the elements for internal values
    (plain floats, or complex ones for the complex step)."""
    f0, q = _exp(values["lnf0"]), _exp(values["lnq"])
    if problem.known:
        ((name, (value, _)),) = problem.known.items()
        scale = problem.topology.scale_from_known(problem.setup, name, value, f0, q)
    else:
        scale = _exp(values["lnscale"])
    extras = {e: _exp(values[f"ln_{e}"]) for e in problem.topology.extras}
    elements = problem.topology.components(problem.setup, f0, q, scale, extras)
    return f0, q, scale, extras, elements


def _exp(x):
    """exp of a plain or a complex number (plain Python numbers: faster than numpy's)."""
    return cmath.exp(x) if isinstance(x, complex) else math.exp(x)


def model_and_jacobian(problem, values: dict, names: list, idx) -> tuple:
    """The reading at the points ``idx`` and its derivative in each internal parameter
    of ``names``, as an array of shape (points, len(names)): complex where the model is
    complex (a reading floor makes it real). A parameter held at one of its bounds
    (the model clips it there) gets a zero column."""
    topology, setup = problem.topology, problem.setup
    clipped = problem.clipped(values)
    f, coefficients = problem.at(idx)
    f0, _, _, extras, elements = circuit_state(problem, clipped)
    factor = topology.loss_factor(f, f0, extras)
    z = topology.impedance(f, elements, factor)
    response = setup.response(z, f, coefficients)
    partials = topology.partials(TWO_PI * f, elements, z, elements["R"] * factor)
    circuit = [n for n in names if n in _CIRCUIT or n.startswith("ln_")]
    jac = np.zeros((f.size, len(names)), dtype=complex)
    if circuit:
        # how each element moves with each parameter: scalars, by the complex step
        moved = [circuit_state(problem, {**clipped, n: clipped[n] + 1j * _STEP}) for n in circuit]
        slots = list(partials)
        by_element = np.array(
            [[np.imag(m[4][e if e != "loss" else "R"]) / _STEP for m in moved] for e in slots]
        )
        columns = np.column_stack(
            [partials[e] * (factor if e == "loss" else 1.0) + 0j * f for e in slots]
        )
        dz = columns @ by_element
        if not np.isscalar(factor):  # a loss that grows with f: its factor moves too
            d_factor = [np.imag(topology.loss_factor(f, m[0], m[3])) / _STEP for m in moved]
            dz += (partials["loss"] * elements["R"] + 0j * f)[:, None] * np.column_stack(d_factor)
        slope = values["gain"] * setup.response_slope(z, coefficients)
        jac[:, [names.index(n) for n in circuit]] = slope[:, None] * dz
    if "gain" in names:
        jac[:, names.index("gain")] = response
    m, jac = problem.bench.apply_with_derivatives(values["gain"] * response, f, clipped, jac, names)
    for i, name in enumerate(names):
        if _at_bound(problem, name, values):
            jac[:, i] = 0.0
    return m, jac


def _at_bound(problem, name: str, values: dict) -> bool:
    if name not in problem.bounds:
        return False
    low, high = problem.bounds[name]
    return not low <= values[name] <= high


def residual_jacobian(problem, values: dict, names: list, idx, noise, weights) -> np.ndarray:
    """d(residual)/d(parameters) for :meth:`~fitkit.problem.FitProblem.residual_values`:
    rows as the residual's (real or magnitude part first, then imaginary or phase), each
    divided by its noise ``weights`` = (sigma of the first part, sigma of the second)."""
    m, jac = model_and_jacobian(problem, values, names, idx)
    data = problem.data[idx]
    with np.errstate(divide="ignore", invalid="ignore"):
        if not np.iscomplexobj(data):
            size = np.abs(m)
            rows = np.real(np.conj(m)[:, None] * jac) / size[:, None] if np.iscomplexobj(m) else jac
            if noise.domain == "relative":
                rows = rows / size[:, None]
            parts = (rows,)
        else:
            if noise.domain == "relative":
                jac = jac / m[:, None]
            parts = (jac.real, jac.imag)
        out = np.empty((len(parts) * m.size, len(names)))
        for i, (part, sigma) in enumerate(zip(parts, weights)):
            out[i * m.size : (i + 1) * m.size] = part if _is_one(sigma) else part / _column(sigma)
    if not np.isfinite(out.sum()):
        out[~np.isfinite(out)] = 0.0
    return out


def _is_one(sigma) -> bool:
    return np.ndim(sigma) == 0 and sigma == 1.0


def _column(sigma):
    sigma = np.asarray(sigma, dtype=float)
    return sigma[:, None] if sigma.ndim else sigma
