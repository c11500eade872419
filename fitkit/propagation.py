"""The fit's covariance carried to every reported value, to first order, in closed form.

Each reported value is a function of the internal parameters (and of a known value, when
one pins the scale). Its gradient is taken exactly by a complex step through the same
arithmetic that computes it (Squire & Trapp, SIAM Review 40, 1998), and the covariance
of the reported values is ``G C G^T`` (the first-order "law of propagation of
uncertainty", JCGM 100:2008 (GUM), eq. 13): what the ``uncertainties`` package gives,
without building an expression graph for every value.
"""

from __future__ import annotations

import numpy as np

_STEP = 1e-100
#: a value whose gradient in a direction is below this share of itself does not depend on it
_NEGLIGIBLE = 1e-9


class Propagated:
    """Reported values, their gradients in the fit's parameters, and the covariance.

    ``inputs`` are further input quantities, independent of the fit and of each other:
    ``(gradient of every reported value in it, its standard uncertainty)`` pairs (the
    fixture values of :mod:`fitkit.setup_uncertainty`)."""

    def __init__(self, problem, values: dict, names: list, covar, inputs=()) -> None:
        self.values = {k: float(v) for k, v in problem.reported(values).items()}
        rows = [_gradient(problem.reported({**values, n: values[n] + 1j * _STEP})) for n in names]
        spreads = []
        if problem.known:
            ((_, (_, known_u)),) = problem.known.items()
            if known_u:
                rows.append(_gradient(problem.reported(values, known_shift=1j * _STEP)))
                spreads.append(known_u)
        #: rows from here on are the further inputs
        self.first_input = len(names) + len(spreads)
        for gradient, u in inputs:
            rows.append(gradient)
            spreads.append(u)
        covar = np.pad(np.asarray(covar, dtype=float), (0, len(spreads)))
        for i, u in enumerate(spreads, start=len(names)):
            covar[i, i] = u**2
        self.gradients = {k: np.array([row.get(k, 0.0) for row in rows]) for k in self.values}
        self.covar = covar

    def std_dev(self, name: str, inputs: bool = True) -> float:
        """The standard uncertainty of ``name``; without the further ``inputs``, the
        fit's own share (and the known value's)."""
        g, covar = self.gradients[name], self.covar
        if not inputs:
            g, covar = g[: self.first_input], covar[: self.first_input, : self.first_input]
        return float(np.sqrt(max(g @ covar @ g, 0.0)))

    def covariance(self, names: list) -> np.ndarray:
        g = np.array([self.gradients[n] for n in names])
        return g @ self.covar @ g.T if names else np.zeros((0, 0))


def depending_on(problem, values: dict, parameter: str) -> set:
    """The reported values that move with one internal parameter."""
    base = problem.reported(values)
    moved = _gradient(problem.reported({**values, parameter: values[parameter] + 1j * _STEP}))
    return {
        k
        for k, d in moved.items()
        if abs(d) > _NEGLIGIBLE * max(abs(float(np.real(base[k]))), 1e-300)
    }


def _gradient(shifted: dict) -> dict:
    return {k: float(np.imag(v)) / _STEP for k, v in shifted.items()}
