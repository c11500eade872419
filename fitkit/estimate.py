"""Closed-form starting values for a series R-L-C seen through a bench setup.

Two exact linearisations, then a cheap search for the one value they leave open:

- complex, calibrated data: invert the setup to Z(f) and solve the linear least squares
  ``Im Z = w L - (1/C) / w``, ``Re Z = R``, weighting each point by how well the
  inversion conditions it;
- magnitude data (or an uncalibrated scale): every bench map leaves a quantity T of the
  measured magnitude that equals ``|loop impedance|^2`` up to a constant, so
  ``T = a + b w^2 + c / w^2`` exactly, linear in (a, b, c), which gives f0 and the
  loaded Q. The loop resistance then follows from a one-dimensional search.

The peak of T and its half-power width are the fallback when the linearisation fails.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from fitkit.circuits import TWO_PI, series_rlc
from fitkit.setups import Setup
from fitkit.sweep import Sweep


@dataclass(frozen=True)
class Start:
    """Where the refinement starts: resonance, loaded Q, loop resistance, scale."""

    f0_hz: float
    q_loaded: float
    loop_ohm: float
    gain: float
    method: str
    mirror_loop_ohm: float | None = None


def circuit_values(setup: Setup, f0_hz: float, q_loaded: float, loop_ohm: float) -> tuple:
    """R, L, C of a series circuit from its resonance, loaded Q and loop resistance."""
    w0 = TWO_PI * f0_hz
    l_h = q_loaded * loop_ohm / w0
    c_f = 1.0 / (w0 * q_loaded * loop_ohm)
    return loop_ohm - setup.external_ohm, l_h, c_f


def predicted(setup: Setup, freq_hz: np.ndarray, f0_hz, q_loaded, loop_ohm, gain=1.0):
    """The measured quantity a series circuit with these values would give."""
    r, l_h, c_f = circuit_values(setup, f0_hz, q_loaded, loop_ohm)
    return gain * setup.response(series_rlc(freq_hz, r, l_h, c_f), freq_hz)


def estimate_start(sweep: Sweep, setup: Setup) -> Start:
    """Closed-form start for a series R-L-C fit (see the module notes)."""
    f = sweep.freq_hz
    if sweep.is_complex and setup.is_calibrated:
        start = _from_impedance(sweep, setup)
        if start is not None:
            return start
    f0, ql, method = _from_magnitude(f, np.abs(sweep.values), setup)
    if setup.is_calibrated:
        loop, mirror = _search_loop(sweep, setup, f0, ql)
        return Start(f0, ql, loop, 1.0, method, mirror)
    loop = max(setup.external_ohm, 1.0)
    model = predicted(setup, f, f0, ql, loop)
    gain = _best_gain(model, sweep.values)
    return Start(f0, ql, loop, gain, method)


def _from_impedance(sweep: Sweep, setup: Setup) -> Start | None:
    f = sweep.freq_hz
    w = TWO_PI * f
    z, noise_gain = setup.impedance_from(sweep.values, f)
    ok = np.isfinite(z) & np.isfinite(noise_gain) & (noise_gain > 0)
    if ok.sum() < 3:
        return None
    weight = 1.0 / noise_gain[ok]
    wc = np.sqrt(w[0] * w[-1])  # columns scaled to order one: w/wc and wc/w
    x = w[ok] / wc
    design = np.column_stack([x, -1.0 / x]) * weight[:, None]
    (p1, p2), *_ = np.linalg.lstsq(design, z[ok].imag * weight, rcond=None)
    l_h, inv_c = p1 / wc, p2 * wc
    if not (l_h > 0 and inv_c > 0):
        return None
    r = float(np.sum(z[ok].real * weight**2) / np.sum(weight**2))
    w0 = np.sqrt(inv_c / l_h)
    loop = max(r, 1e-6 * w0 * l_h) + setup.external_ohm
    return Start(w0 / TWO_PI, w0 * l_h / loop, loop, 1.0, "linear least squares on Z(f)")


def loop_power_transform(setup: Setup, magnitude: np.ndarray) -> np.ndarray:
    """T(|m|), proportional to |loop impedance|^2 for every bench map (see module notes)."""
    a, b, c, d = setup.coefficients(np.array([1.0]))
    with np.errstate(divide="ignore", invalid="ignore"):
        if np.all(a == 0):
            return 1.0 / magnitude**2
        if np.all(c == 0):
            return magnitude**2
        return 1.0 / (1.0 - magnitude**2)


def _from_magnitude(f: np.ndarray, magnitude: np.ndarray, setup: Setup) -> tuple:
    wc = TWO_PI * np.sqrt(f[0] * f[-1])
    x = f / np.sqrt(f[0] * f[-1])  # w/wc: columns of order one
    t = loop_power_transform(setup, magnitude)
    ok = np.isfinite(t) & (t > 0)
    if ok.sum() >= 3:
        # relative least squares: each row divided by T, as noise in T scales with T
        design = np.column_stack([np.ones(ok.sum()), x[ok] ** 2, 1.0 / x[ok] ** 2]) / t[ok, None]
        (a0, b0, c0), *_ = np.linalg.lstsq(design, np.ones(ok.sum()), rcond=None)
        if b0 > 0 and c0 > 0 and a0 + 2.0 * np.sqrt(b0 * c0) > 0:
            w0 = wc * (c0 / b0) ** 0.25
            ql = (w0 / wc) * np.sqrt(b0) / np.sqrt(a0 + 2.0 * np.sqrt(b0 * c0))
            if f[0] / 10 < w0 / TWO_PI < f[-1] * 10 and ql > 0:
                return w0 / TWO_PI, ql, "quadratic fit of the loop power"
    return _from_peak(f, t, ok)


def _from_peak(f: np.ndarray, t: np.ndarray, ok: np.ndarray) -> tuple:
    """Resonance at the smallest loop power; loaded Q from where it doubles."""
    idx = np.flatnonzero(ok)
    i0 = idx[np.argmin(t[idx])]
    level = 2.0 * t[i0]
    lo = i0
    while lo > 0 and ok[lo - 1] and t[lo - 1] < level:
        lo -= 1
    hi = i0
    while hi < f.size - 1 and ok[hi + 1] and t[hi + 1] < level:
        hi += 1
    width = max(f[min(hi + 1, f.size - 1)] - f[max(lo - 1, 0)], 1e-9 * f[i0])
    return float(f[i0]), float(f[i0] / width), "peak and half-power width"


def _search_loop(sweep: Sweep, setup: Setup, f0: float, ql: float) -> tuple:
    """The loop resistance that best matches the measured scale, f0 and Q held.

    Returns the best value and, when a second, distinct value matches about as well
    (a magnitude-only reflection cannot tell R from Z0^2/R), that value too.
    """
    f = sweep.freq_hz
    data = sweep.values

    def cost(log_loop: float) -> float:
        model = predicted(setup, f, f0, ql, np.exp(log_loop))
        if sweep.is_complex:
            return float(np.sum(np.abs(model - data) ** 2))
        with np.errstate(divide="ignore"):
            return float(np.sum((np.log(np.abs(model)) - np.log(np.abs(data))) ** 2))

    lower = np.log(max(setup.external_ohm, 1e-3) * 1.0001)
    grid = np.linspace(lower, np.log(1e7), 121)
    costs = np.array([cost(g) for g in grid])
    inner = np.arange(1, grid.size - 1)
    minima = inner[(costs[inner] <= costs[inner - 1]) & (costs[inner] <= costs[inner + 1])]
    minima = sorted(minima, key=lambda i: costs[i]) or [int(np.nanargmin(costs))]
    found = []
    for i in minima[:2]:
        lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
        best = minimize_scalar(cost, bounds=(lo, hi), method="bounded")
        found.append((best.fun, float(np.exp(best.x))))
    found.sort()
    best_cost, best_loop = found[0]
    if len(found) > 1 and found[1][0] <= 2.0 * best_cost + 1e-12 * (1 + best_cost):
        return best_loop, found[1][1]
    return best_loop, None


def _best_gain(model: np.ndarray, data: np.ndarray) -> float:
    if np.iscomplexobj(data):
        return float(np.real(np.vdot(model, data)) / np.vdot(model, model).real)
    mag = np.abs(model)
    return float(np.dot(mag, data) / np.dot(mag, mag))
