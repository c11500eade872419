"""Closed-form starting values, for every topology seen through every bench setup.

Exact linearisations first, then a cheap search for what they leave open:

- complex, calibrated data: invert the setup to Z(f) and solve a linear least squares,
  ``Im Z = w L - (1/C) / w`` for a series circuit, ``Im Y = w C - (1/L) / w`` on the
  admittance for a tank, each point weighted by how well the inversion conditions it;
- magnitude data (or an uncalibrated scale): every bench map leaves a quantity T of the
  measured magnitude that equals ``|loop impedance|^2`` up to a constant, so for a series
  circuit ``T = a + b w^2 + c / w^2`` exactly, linear in (a, b, c), giving f0 and the
  loaded Q; a tank read on an impedance analyser gives the same form in ``1/|Z|^2``.
  The scale resistance then follows from a one-dimensional search.

The extremum of T and its half-power width are the fallback when a linearisation fails;
a tank seen only in magnitude through a fixture gets a few Q values tried from there.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from fitkit.circuits import TWO_PI
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.topologies import SERIES, Topology

EXTREMUM = "resonance and half-power width"


@dataclass(frozen=True)
class Start:
    """Where the refinement starts, in the topology's internal terms."""

    f0_hz: float
    q: float
    scale_ohm: float
    gain: float
    method: str
    extras: dict = field(default_factory=dict)
    mirror_scale_ohm: float | None = None

    @property
    def from_extremum(self) -> bool:
        """Taken from the reading's extremum (what a second start would take again)."""
        return self.method.startswith(EXTREMUM)


def predicted(
    setup: Setup,
    freq_hz: np.ndarray,
    f0_hz,
    q,
    scale_ohm,
    *,
    topology: Topology = SERIES,
    extras: dict | None = None,
    gain: float = 1.0,
    coefficients=None,
) -> np.ndarray:
    """What the instrument would read for a circuit with these internal values."""
    extras = extras or {}
    comps = topology.components(setup, f0_hz, q, scale_ohm, extras)
    factor = topology.loss_factor(freq_hz, f0_hz, extras)
    z = topology.impedance(freq_hz, comps, factor)
    return gain * setup.response(z, freq_hz, coefficients)


def estimate_start(
    sweep: Sweep,
    setup: Setup,
    topology: Topology = SERIES,
    *,
    from_extremum: bool = False,
) -> Start:
    """Closed-form start for a fit of ``topology`` (see the module notes).

    ``from_extremum`` skips the linearisations: the second start, for a refinement that
    left the sweep from the first.
    """
    f = sweep.freq_hz
    if sweep.is_complex and setup.is_calibrated and not from_extremum:
        start = _from_impedance(sweep, setup, topology)
        # noise can push a linearised estimate off the sweep: then the magnitude's turn
        if start is not None and f[0] <= start.f0_hz <= f[-1]:
            return start
    if from_extremum:
        f0, q, method = _from_extremum(f, _dip_at_resonance(setup, np.abs(sweep.values), topology))
    else:
        f0, q, method = _from_magnitude(f, np.abs(sweep.values), setup, topology)
    extras = _extras_guess(f, np.abs(sweep.values), setup, topology, f0)
    search = _Search(sweep, setup, topology, extras)
    if setup.bench == "across" or (topology.family == "tank" and setup.bench != "impedance"):
        q, method = search.best_q(f0, q), method + ", Q tried on a grid"
    if setup.is_calibrated:
        scale, mirror = search.scale(f0, q)
        return Start(f0, q, scale, 1.0, method, extras, mirror)
    scale = setup.external_ohm + 1.0  # a lossless start can sit on a pole of the model
    model = predicted(setup, f, f0, q, scale, topology=topology, extras=extras)
    return Start(f0, q, scale, _best_gain(model, sweep.values), method, extras)


def _linear_fit(w: np.ndarray, target: np.ndarray, weight: np.ndarray) -> tuple:
    """Least squares for ``target = p w - s / w``, columns scaled to order one."""
    wc = np.sqrt(w[0] * w[-1])
    x = w / wc
    design = np.column_stack([x, -1.0 / x]) * weight[:, None]
    (p1, p2), *_ = np.linalg.lstsq(design, target * weight, rcond=None)
    return p1 / wc, p2 * wc


def _from_impedance(sweep: Sweep, setup: Setup, topology: Topology) -> Start | None:
    f = sweep.freq_hz
    w = TWO_PI * f
    z, noise_gain = setup.impedance_from(sweep.values, f)
    ok = np.isfinite(z) & np.isfinite(noise_gain) & (noise_gain > 0) & (z != 0)
    if ok.sum() < 3:
        return None
    if topology.family == "tank":
        y = 1.0 / z[ok]
        weight = np.abs(z[ok]) ** 2 / noise_gain[ok]
        c_f, inv_l = _linear_fit(w[ok], y.imag, weight)
        if not (c_f > 0 and inv_l > 0):
            return None
        w0 = np.sqrt(inv_l / c_f)
        near = np.argmin(np.abs(w[ok] - w0))
        r_dynamic = 1.0 / max(y.real[near], 1e-12)
        q = max(r_dynamic * w0 * c_f, 0.5)
        extras = _extras_guess(f, np.abs(sweep.values), setup, topology, w0 / TWO_PI, z)
        return Start(w0 / TWO_PI, q, r_dynamic, 1.0, "linear least squares on Y(f)", extras)
    weight = 1.0 / noise_gain[ok]
    l_h, inv_c = _linear_fit(w[ok], z[ok].imag, weight)
    if not (l_h > 0 and inv_c > 0):
        return None
    r = float(np.sum(z[ok].real * weight**2) / np.sum(weight**2))
    w0 = np.sqrt(inv_c / l_h)
    loop = max(r, 1e-6 * w0 * l_h) + setup.external_ohm
    extras = _extras_guess(f, np.abs(sweep.values), setup, topology, w0 / TWO_PI, z)
    return Start(w0 / TWO_PI, w0 * l_h / loop, loop, 1.0, "linear least squares on Z(f)", extras)


def loop_power_transform(setup: Setup, magnitude: np.ndarray) -> np.ndarray:
    """T(|m|), proportional to |loop impedance|^2 for every bench map (see module notes)."""
    a, b, c, d = setup.coefficients(np.array([1.0]))
    with np.errstate(divide="ignore", invalid="ignore"):
        if np.all(a == 0):
            return 1.0 / magnitude**2
        if np.all(c == 0):
            return magnitude**2
        return 1.0 / (1.0 - magnitude**2)


def _dip_at_resonance(setup: Setup, magnitude: np.ndarray, topology: Topology) -> np.ndarray:
    """A curve of the reading with its minimum at the resonance, for every bench.

    The loop power dips at a series resonance and peaks at a tank's; across the circuit
    the reading itself dips at a series resonance and peaks at a tank's.
    """
    if setup.bench == "across":
        t = magnitude**2
    else:
        t = loop_power_transform(setup, magnitude)
    return 1.0 / t if topology.family == "tank" else t


def _from_magnitude(f, magnitude, setup: Setup, topology: Topology) -> tuple:
    t = _dip_at_resonance(setup, magnitude, topology)
    if setup.bench == "across" or (topology.family == "tank" and setup.bench != "impedance"):
        # no exact linearisation here; on an impedance analyser a tank's 1/|Z|^2 is its
        # |Y|^2, the same quadratic form as a series circuit's |Z|^2
        return _from_extremum(f, t)
    ok = np.isfinite(t) & (t > 0)
    if ok.sum() >= 3:
        wc = TWO_PI * np.sqrt(f[0] * f[-1])
        x = f / np.sqrt(f[0] * f[-1])
        # relative least squares: each row divided by T, as noise in T scales with T
        design = np.column_stack([np.ones(ok.sum()), x[ok] ** 2, 1.0 / x[ok] ** 2]) / t[ok, None]
        (a0, b0, c0), *_ = np.linalg.lstsq(design, np.ones(ok.sum()), rcond=None)
        if b0 > 0 and c0 > 0 and a0 + 2.0 * np.sqrt(b0 * c0) > 0:
            w0 = wc * (c0 / b0) ** 0.25
            q = (w0 / wc) * np.sqrt(b0) / np.sqrt(a0 + 2.0 * np.sqrt(b0 * c0))
            if f[0] <= w0 / TWO_PI <= f[-1] and q > 0:
                return w0 / TWO_PI, q, "quadratic fit of the loop power"
    return _from_extremum(f, t)


def _from_extremum(f: np.ndarray, t: np.ndarray) -> tuple:
    """Resonance at the smallest T; Q from where T doubles."""
    ok = np.isfinite(t) & (t > 0)
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
    return float(f[i0]), float(f[i0] / width), EXTREMUM


def _extras_guess(f, magnitude, setup, topology: Topology, f0, z=None) -> dict:
    """The coil's self-resonance (a second resonance above f0 if the sweep shows one)
    and, for a loss growing as sqrt(f), an even share of growing loss at f0."""
    out = {"skin": 1.0} if "skin" in topology.extras else {}
    if "f_self" not in topology.extras:
        return out
    return {**out, **_self_resonance_guess(f, magnitude, setup, topology, f0, z)}


def _self_resonance_guess(f, magnitude, setup, topology: Topology, f0, z) -> dict:
    above = f > 1.5 * f0
    if z is not None:
        # the coil's parallel resonance: Im Z falls through zero above the series one
        x = z.imag
        cross = np.flatnonzero(above[:-1] & (x[:-1] > 0) & (x[1:] <= 0))
        if cross.size:
            return {"f_self": float(f[cross[0]])}
    t = _dip_at_resonance(setup, magnitude, topology)  # peaks at the coil's own resonance
    if above.sum() > 3:
        i = int(np.nanargmax(np.where(above, t, -np.inf)))
        if 0 < i < f.size - 1:
            return {"f_self": float(f[i])}
    return {"f_self": float(3.0 * f[-1])}


class _Search:
    """One-dimensional searches with the rest held: the scale, then a grid of Q."""

    def __init__(self, sweep, setup, topology, extras) -> None:
        self.sweep, self.setup, self.topology = sweep, setup, topology
        self.extras = extras
        self.coefficients = setup.coefficients(sweep.freq_hz)

    def cost(self, f0, q, log_scale: float) -> float:
        model = predicted(
            self.setup,
            self.sweep.freq_hz,
            f0,
            q,
            np.exp(log_scale),
            topology=self.topology,
            extras=self.extras,
            coefficients=self.coefficients,
        )
        data = self.sweep.values
        if self.sweep.is_complex:
            return float(np.sum(np.abs(model - data) ** 2))
        with np.errstate(divide="ignore"):
            return float(np.sum((np.log(np.abs(model)) - np.log(np.abs(data))) ** 2))

    def scale(self, f0: float, q: float) -> tuple:
        """The best scale and, when a distinct second one matches about as well (a
        magnitude-only reflection cannot tell R from Z0^2/R), that one too."""
        from scipy.optimize import minimize_scalar  # (kept out of 'fitkit plan's start-up)

        floor = self.setup.external_ohm if self.topology.scale_floor_is_fixture else 0.0
        grid = np.linspace(np.log(max(floor, 1e-3) * 1.0001), np.log(1e9), 49)
        costs = np.array([self.cost(f0, q, g) for g in grid])
        padded = np.concatenate([[np.inf], costs, [np.inf]])
        minima = np.flatnonzero((costs <= padded[:-2]) & (costs <= padded[2:]))
        minima = sorted(minima, key=lambda i: costs[i]) or [int(np.nanargmin(costs))]
        found = []
        for i in minima[:2]:
            lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
            best = minimize_scalar(lambda g: self.cost(f0, q, g), bounds=(lo, hi), method="bounded")
            found.append((best.fun, float(np.exp(best.x))))
        found.sort()
        best_cost, best_scale = found[0]
        if len(found) > 1 and found[1][0] <= 2.0 * best_cost + 1e-12 * (1 + best_cost):
            return best_scale, found[1][1]
        return best_scale, None

    def best_q(self, f0: float, q_guess: float) -> float:
        """The Q on a short geometric grid from the guess that fits best."""
        candidates = q_guess * np.array([1.0, 3.0, 10.0, 30.0])
        costs = [self.cost(f0, q, np.log(self.scale(f0, q)[0])) for q in candidates]
        return float(candidates[int(np.argmin(costs))])


def _best_gain(model: np.ndarray, data: np.ndarray) -> float:
    if np.iscomplexobj(data):
        return float(np.real(np.vdot(model, data)) / np.vdot(model, model).real)
    mag = np.abs(model)
    return float(np.dot(mag, data) / np.dot(mag, mag))


#: how many times the readings' robust scatter the smoothed dip curve must span before
#: its shape is read
_RESOLVED = 10.0


def resonance_side(sweep: Sweep, setup: Setup, topology: Topology, strict: bool = False):
    """``"above"`` or ``"below"`` the sweep when the reading shows the resonance lies
    beyond that end (read as ``topology``), ``None`` when its shape does not say.

    The curve that dips at the resonance (see :func:`_dip_at_resonance`) keeps falling
    toward the end of the sweep nearer the resonance: its lowest stretch sits at that
    end. A running median over a few points keeps one noisy reading from deciding.
    ``strict`` asks for the lowest point of the smoothed curve to be the end point
    itself: still falling there, so no resonance of this shape can lie inside. A curve
    whose smoothed span is within a few times the readings' scatter gives no verdict.
    """
    t = _dip_at_resonance(setup, np.abs(sweep.values), topology)
    ok = np.isfinite(t) & (t > 0)  # (noise can lift a reflection above 1: no power there)
    if ok.sum() < 5:
        return None
    from scipy.ndimage import median_filter  # (a fit's import, not the command line's)

    t = t[ok]
    # the running median, the ends padded with the end values; in C, as a window that
    # grows with the sweep would make it cost as the square of the points in numpy
    smooth = median_filter(t, size=max(3, t.size // 20) | 1, mode="nearest")
    # a shape lost in the readings' scatter says nothing (a high-Q tank straight on a
    # reflection bridge: |S11| within a few tenths of a per cent of 1 everywhere)
    scatter = 1.4826 * float(np.median(np.abs(t - smooth)))
    if float(np.ptp(smooth)) <= _RESOLVED * scatter:
        return None
    lowest = int(np.argmin(smooth))
    margin = 1 if strict else max(2, t.size // 20)
    if lowest >= t.size - margin:
        return "above"
    if lowest < margin:
        return "below"
    return None


def dip_contrast(setup: Setup, magnitude: np.ndarray, topology: Topology) -> tuple:
    """How far the curve that dips at the resonance rises from its lowest value to each
    end of the sweep (as ratios): 2 at an end means that end is 3 dB off resonance."""
    t = _dip_at_resonance(setup, np.abs(magnitude), topology)
    ok = np.isfinite(t) & (t > 0)
    if ok.sum() < 3:
        return np.inf, np.inf
    t = t[ok]
    low = float(np.min(t))
    return float(t[0] / low), float(t[-1] / low)
