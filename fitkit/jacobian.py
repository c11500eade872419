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

import numpy as np

from fitkit.circuits import TWO_PI

_STEP = 1e-100  # complex step
_CIRCUIT = ("lnf0", "lnq", "lnscale")


def circuit_state(problem, values: dict) -> tuple:
    """f0, Q, the scale resistance, the extras and the elements for internal values
    (plain floats, or complex ones for the complex step)."""
    f0, q = np.exp(values["lnf0"]), np.exp(values["lnq"])
    if problem.known:
        ((name, (value, _)),) = problem.known.items()
        scale = problem.topology.scale_from_known(problem.setup, name, value, f0, q)
    else:
        scale = np.exp(values["lnscale"])
    extras = {e: np.exp(values[f"ln_{e}"]) for e in problem.topology.extras}
    elements = problem.topology.components(problem.setup, f0, q, scale, extras)
    return f0, q, scale, extras, elements


def model_and_jacobian(problem, values: dict, names: list, idx) -> tuple:
    """The reading at the points ``idx`` and its derivative in each internal parameter
    of ``names``, as an array of shape (points, len(names)): complex where the model is
    complex (a reading floor makes it real). A parameter held at one of its bounds
    (the model clips it there) gets a zero column."""
    topology, setup, bench = problem.topology, problem.setup, problem.bench
    clipped = {
        k: min(max(v, problem.bounds[k][0]), problem.bounds[k][1]) if k in problem.bounds else v
        for k, v in values.items()
    }
    f, coefficients = problem.at(idx)
    w = TWO_PI * f
    f0, _, _, extras, elements = circuit_state(problem, clipped)
    factor = topology.loss_factor(f, f0, extras)
    loss = elements["R"] * factor
    z = topology.impedance(f, elements, factor)
    response = setup.response(z, f, coefficients)
    slope = values["gain"] * setup.response_slope(z, coefficients)
    partials = topology.partials(w, elements, z, loss)
    columns = {}
    for name in names:
        if name in _CIRCUIT or name.startswith("ln_"):
            shifted = dict(clipped)
            shifted[name] = clipped[name] + 1j * _STEP
            f0_c, _, _, extras_c, elements_c = circuit_state(problem, shifted)
            d_factor = np.imag(topology.loss_factor(f, f0_c, extras_c)) / _STEP
            dz = partials["loss"] * (
                np.imag(elements_c["R"]) / _STEP * factor + elements["R"] * d_factor
            )
            for element, dz_de in partials.items():
                if element != "loss":
                    dz = dz + dz_de * (np.imag(elements_c[element]) / _STEP)
            columns[name] = slope * dz
        elif name == "gain":
            columns[name] = response
    m = values["gain"] * response
    m, columns = bench.apply_with_derivatives(m, f, clipped, columns, names)
    zero = np.zeros(f.size)
    jac = np.column_stack(
        [
            zero if _at_bound(problem, name, values) else np.broadcast_to(columns[name], f.shape)
            for name in names
        ]
    )
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
            d_size = (
                np.real(np.conj(m)[:, None] * jac) / size[:, None] if np.iscomplexobj(m) else jac
            )
            if noise.domain == "relative":
                d_size = d_size / size[:, None]
            rows = d_size / _column(weights[0])
        elif noise.domain == "additive":
            rows = np.concatenate([jac.real / _column(weights[0]), jac.imag / _column(weights[1])])
        else:
            d_log = jac / m[:, None]
            rows = np.concatenate(
                [d_log.real / _column(weights[0]), d_log.imag / _column(weights[1])]
            )
    return np.where(np.isfinite(rows), rows, 0.0)


def _column(sigma):
    sigma = np.asarray(sigma, dtype=float)
    return sigma[:, None] if sigma.ndim else sigma
