"""Where the next points inform the fit most: the Fisher information of the chosen model.

The model is the one the fit uses, in the fit's own parameters ``theta = (ln f0, ln q,
ln scale)`` of :mod:`fitkit.topologies` (and the ln of a coil's self-resonance), seen
through the bench's :class:`~fitkit.setups.Setup`. An uncalibrated (relative) sweep adds
the ln of its gain; where the bench leaves the scale open (a relative divider: only the
shape counts) the gain stands in for it, the scale held. A loss growing as sqrt(f) is
placed for as its plain circuit: near the resonance the two differ little.

With complex readings of standard deviation ``sigma_i`` per real and imaginary part,
the Fisher matrix is ``F = sum_i (Re J_i^T Re J_i + Im J_i^T Im J_i) / sigma_i^2``
and no unbiased estimate of a value ``v(theta)`` beats ``var ln v >= g^T F^-1 g`` with
``g = d ln v / d theta`` (the Cramer-Rao bound; Kay, Fundamentals of Statistical Signal
Processing: Estimation Theory, 1993, ch. 3, from memory). For a series circuit this is
the bound :func:`fitkit.plan.cramer_rao` gives analytically (a test checks they agree);
here the Jacobian is taken by central differences so the tank and the coil are served
the same way.

The next points are chosen greedily (a sequential c-optimal design): among candidate
frequencies spread over the resonance in loaded bandwidths (:func:`fitkit.plan.
bandwidths_to_hz`), the one that lowers the bound on the target most is added, and so on
for a batch.
"""

from __future__ import annotations

import math

import numpy as np

from fitkit.plan import bandwidths_to_hz
from fitkit.result import CircuitFit
from fitkit.setups import Setup
from fitkit.topologies import get_topology

_STEP = 1e-6  # relative step of the central differences, in the log parameters
_CANDIDATES = 121
_SPAN_BW = 6.0  # candidates lie within +-6 loaded bandwidths of the resonance
_TOO_CLOSE = 1e-7  # relative distance under which a candidate repeats a taken point


class InformationModel:
    """The chosen model around the current fit, ready to rate candidate frequencies.

    Parameters
    ----------
    topology : str
        ``"series"``, ``"tank"`` or ``"coil"`` (a ``-sqrtf`` model: its plain circuit).
    setup : Setup
        The bench arrangement.
    f0_hz, q : float
        The fit's internal resonance and the topology's Q (loaded Q for the series
        circuit and the coil, the coil's Q for the tank).
    scale : float or None
        The scale resistance (loop resistance for the series circuit and the coil,
        dynamic resistance for the tank); None where the sweep leaves it open.
    target : str
        The value to pin down, a name the fit reports (``"Q"``, ``"L"``, ``"f0"``...).
    extras : dict, optional
        The topology's extra values (``{"f_self": ...}`` for the coil).
    gain : float, optional
        The gain of an uncalibrated sweep (then a parameter); None for a calibrated one.
    """

    def __init__(
        self,
        topology: str,
        setup: Setup,
        f0_hz,
        q,
        scale,
        target: str,
        *,
        extras: dict | None = None,
        gain: float | None = None,
    ) -> None:
        self.topology = get_topology(topology.removesuffix("-sqrtf"))
        self.setup = setup
        free = {"f0": f0_hz, "q": q}
        if scale is not None:
            free["scale"] = scale
        free.update({e: (extras or {})[e] for e in self.topology.extras})
        if gain is not None:
            free["gain"] = abs(gain)
        self.names = tuple(free)
        self.held = {"scale": 1.0, "gain": 1.0}  # stand-ins for values not free
        self.theta = np.log([float(v) for v in free.values()])
        self.target = target
        self.gradient = self._target_gradient()

    @classmethod
    def from_fit(cls, fit: CircuitFit, setup: Setup, target: str) -> InformationModel:
        """The model at a fit's values (the gain of an uncalibrated sweep from its curve)."""
        topology = get_topology(fit.topology.removesuffix("-sqrtf"))
        if topology.family == "tank":
            q, scale = fit["Q"].value, fit["R_dynamic"]
            scale = scale.value if scale.determined else None
        else:
            q, r = fit["Q_loaded"].value, fit["R"]
            scale = r.value + setup.external_ohm if r.determined else None
        extras = {e: fit[e].value for e in topology.extras}
        f0 = fit["f0"].value
        model = cls(topology.name, setup, f0, q, scale, target, extras=extras)
        if setup.is_calibrated:
            return model
        freq_hz, _, fitted = fit.model_curve
        unit = model.response(freq_hz)
        gain = float(np.real(np.vdot(unit, fitted)) / np.real(np.vdot(unit, unit)))
        return cls(topology.name, setup, f0, q, scale, target, extras=extras, gain=gain)

    def _unpack(self, theta: np.ndarray) -> dict:
        return {**self.held, **dict(zip(self.names, np.exp(theta)))}

    def _components(self, theta: np.ndarray) -> tuple:
        v = self._unpack(theta)
        extras = {e: v[e] for e in self.topology.extras}
        return v, self.topology.components(self.setup, v["f0"], v["q"], v["scale"], extras)

    def _values(self, theta: np.ndarray) -> dict:
        v, comps = self._components(theta)
        return {**comps, **self.topology.derived(self.setup, v["f0"], v["q"], comps)}

    def response(self, freq_hz: np.ndarray, theta: np.ndarray | None = None) -> np.ndarray:
        """What the bench reads at these frequencies."""
        f = np.asarray(freq_hz, dtype=np.float64)
        v, comps = self._components(self.theta if theta is None else theta)
        return v["gain"] * self.setup.response(self.topology.impedance(f, comps, 1.0), f)

    def _central(self, func) -> list:
        """Central differences of ``func(theta)`` along each parameter."""
        out = []
        for step in np.eye(self.theta.size) * _STEP:
            out.append((func(self.theta + step) - func(self.theta - step)) / (2 * _STEP))
        return out

    def jacobian(self, freq_hz: np.ndarray) -> np.ndarray:
        """d(reading)/d theta, complex, one row per frequency."""
        return np.column_stack(self._central(lambda t: self.response(freq_hz, t)))

    def _target_gradient(self) -> np.ndarray:
        return np.array(self._central(lambda t: math.log(self._values(t)[self.target])))

    def information(self, freq_hz: np.ndarray, sigma: np.ndarray) -> np.ndarray:
        """The Fisher matrix of readings at these frequencies with these sigmas."""
        jac = self.jacobian(freq_hz) / np.asarray(sigma, dtype=np.float64)[:, None]
        return jac.real.T @ jac.real + jac.imag.T @ jac.imag

    def relative_bound(self, fisher: np.ndarray) -> float:
        """The Cramer-Rao bound on the target's relative standard deviation."""
        try:
            return math.sqrt(max(float(self.gradient @ np.linalg.solve(fisher, self.gradient)), 0))
        except np.linalg.LinAlgError:
            return math.inf

    def loaded_q(self) -> float:
        """Loaded Q of the response (sets the width of the candidate band)."""
        return float(self._values(self.theta)["Q_loaded"])

    def next_frequencies(
        self,
        taken_hz: np.ndarray,
        sigma: np.ndarray,
        count: int,
        *,
        shift: float = 0.0,
        span_hz: tuple = (0.0, math.inf),
    ) -> list:
        """Pick ``count`` new frequencies, each lowering the bound on the target most.

        Parameters
        ----------
        taken_hz, sigma : ndarray
            The points taken so far and their standard deviations.
        count : int
            How many to pick.
        shift : float
            Shifts the candidate grid by this share of its step (vary it between
            rounds so points do not repeat).
        span_hz : tuple
            Candidates stay within these frequencies.
        """
        f0 = math.exp(self.theta[0])
        ql = self.loaded_q()
        step = 2 * _SPAN_BW / (_CANDIDATES - 1)
        xs = -_SPAN_BW + step * (np.arange(_CANDIDATES) + shift % 1.0)
        cands = np.array([bandwidths_to_hz(x, f0, ql) for x in xs])
        cands = cands[(cands >= span_hz[0]) & (cands <= span_hz[1])]
        taken = np.asarray(taken_hz, dtype=np.float64)
        near = np.min(np.abs(cands[:, None] / taken[None, :] - 1.0), axis=1) < _TOO_CLOSE
        cands = cands[~near]
        typical = float(np.median(sigma))
        fisher = self.information(taken, sigma)
        jac = self.jacobian(cands) / typical
        per = np.einsum("ni,nj->nij", jac.real, jac.real) + np.einsum(
            "ni,nj->nij", jac.imag, jac.imag
        )
        chosen = []
        for _ in range(min(count, cands.size)):
            scores = [self.relative_bound(fisher + p) for p in per]
            best = int(np.argmin(scores))
            chosen.append(float(cands[best]))
            fisher = fisher + per[best]
            per = np.delete(per, best, axis=0)
            cands = np.delete(cands, best)
        return chosen
