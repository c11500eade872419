"""Sweep planning: the Fisher information of a sweep and the Cramer-Rao lower bound.

No unbiased estimator can beat ``cov >= F^-1``, with the Fisher matrix
``F = J^T J`` of the model Jacobian J whitened by the noise (real and imaginary parts
stacked for complex data, magnitude rows only for magnitude data); Kay, Fundamentals of
Statistical Signal Processing: Estimation Theory, 1993, ch. 3 (from memory).

The Jacobian is taken in the fit's own well-conditioned parameters (ln f0, ln Q, ln of the
scale resistance, for a coil ln of its self-resonance, and for an uncalibrated scale
ln gain), through the same forward model the fit uses (:func:`fitkit.estimate.predicted`:
every model of :mod:`fitkit.topologies`, with a loss growing as sqrt(f) when asked, read
through any bench of :mod:`fitkit.setups`). The derivatives are central differences of
step 1e-6 in the log parameters: their truncation error (about 1e-12 relative) is far
below anything a bound is read to. Every reported value (R, L, C, f0, Q, the bandwidths
and the model's own extras) follows by the delta method from its gradient in the same
log parameters.

A value is *undetermined* when its gradient has a component along a direction the data
leave open (a relative sweep: scale and loop resistance trade off exactly); the bound is
then not a large number but no number at all, with the reason.

A sweep's span is counted in loaded half-power bandwidths through the response's own
variable: the point ``x`` bandwidths from resonance sits where ``QL y = 2 x`` (so
``x = +-1/2`` are exactly the half-power points), which keeps every frequency positive
even for a wide span at low Q.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from fitkit.circuits import TWO_PI
from fitkit.errors import SetupError
from fitkit.estimate import predicted
from fitkit.noise import Noise
from fitkit.result import OPTIONAL, QUANTITIES, Quantity
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.topologies import get_topology
from fitkit.units import format_quantity

SPACINGS = ("linear", "log")
#: what the bound covers for every model, named as in a fit's quantities (a model's own
#: extras, such as a tank's dynamic resistance, come on top: :data:`fitkit.result.OPTIONAL`)
BOUNDED = ("R", "L", "C", "f0", "Q", "Q_loaded", "bandwidth", "loaded_bandwidth")
#: the kind of reading each bench gives
READING_OF_BENCH = {
    "divider": "ratio",
    "across": "ratio",
    "impedance": "impedance",
    "reflection": "s11",
    "series-through": "s21",
    "shunt-through": "s21",
}
#: the grid the planner searches: half-spans in loaded bandwidths, and point counts
PLAN_SPANS_BW = (1.0, 1.5, 2.0, 3.0, 5.0, 10.0, 20.0)
PLAN_POINTS = (11, 21, 51, 101, 201, 401, 1001, 2001, 5001)
_SINGULAR = 1e-6  # relative singular value below which a direction is not determined
_LEAK = 1e-3  # share of a gradient along an open direction that makes a value open too
_EXACT_KNOWN = 1e-6  # relative uncertainty taken for a known value given without one
_STEP = 1e-6  # central-difference step in the log parameters


@dataclass(frozen=True)
class SweepShape:
    """Where a planned sweep lies, relative to the expected resonance.

    Attributes
    ----------
    span_bw : float
        Half the span in loaded half-power bandwidths (the sweep covers +-span_bw).
    points : int
        Number of frequencies.
    spacing : str
        ``"linear"`` or ``"log"`` (geometric) spacing between the end frequencies.
    offset_bw : float
        Centre of the sweep, in loaded bandwidths above the resonance.
    """

    span_bw: float = 3.0
    points: int = 201
    spacing: str = "linear"
    offset_bw: float = 0.0

    def __post_init__(self) -> None:
        if not (math.isfinite(self.span_bw) and self.span_bw > 0):
            raise SetupError(
                f"the span must be above zero bandwidths, not {self.span_bw!r}",
                remedy="give the half-span in bandwidths, e.g. 3 for +-3 bandwidths",
            )
        if self.points < 6:
            raise SetupError(
                f"a sweep of {self.points} points cannot determine a resonance",
                remedy="plan at least 20 points (a fit needs 6 or more)",
            )
        if self.spacing not in SPACINGS:
            raise SetupError(f"unknown spacing {self.spacing!r}", remedy="choose linear or log")
        if not math.isfinite(self.offset_bw):
            raise SetupError(f"the centre offset {self.offset_bw!r} is not a number")

    def frequencies(self, f0_hz: float, q_loaded: float) -> np.ndarray:
        """The planned frequencies for a resonance ``f0_hz`` of loaded Q ``q_loaded``."""
        ends = [
            bandwidths_to_hz(x, f0_hz, q_loaded)
            for x in (self.offset_bw - self.span_bw, self.offset_bw + self.span_bw)
        ]
        if self.spacing == "log":
            return np.geomspace(ends[0], ends[1], self.points)
        return np.linspace(ends[0], ends[1], self.points)


def bandwidths_to_hz(x_bw: float, f0_hz: float, q_loaded: float) -> float:
    """The frequency ``x_bw`` loaded bandwidths from resonance (``QL y = 2 x``)."""
    u = x_bw / q_loaded
    return f0_hz * (u + math.sqrt(1.0 + u * u))


def hz_to_bandwidths(freq_hz: float, f0_hz: float, q_loaded: float) -> float:
    """Inverse of :func:`bandwidths_to_hz`."""
    return 0.5 * q_loaded * (freq_hz / f0_hz - f0_hz / freq_hz)


@dataclass(frozen=True)
class Bounds:
    """Cramer-Rao lower bounds on the standard deviations of everything a fit reports.

    Attributes
    ----------
    quantities : dict
        Name (:data:`BOUNDED` and the model's extras) -> :class:`~fitkit.result.Quantity`
        holding the expected value and its bound, or no number and the reason.
    freq_hz : ndarray
        The frequencies the bound is for.
    parameters : list of str
        The internal parameters, in the order of ``covariance``.
    covariance : ndarray
        The bound on the internal parameters' covariance (pseudo-inverse on the
        determined directions).
    bench : dict
        Name -> the standard uncertainty the bench values' stated ones give it (no
        sweep lowers it; it adds to the bound in quadrature); empty when none is stated.
    """

    quantities: dict
    freq_hz: np.ndarray
    parameters: list
    covariance: np.ndarray
    bench: dict = field(default_factory=dict)

    def __getitem__(self, name: str) -> Quantity:
        return self.quantities[name]

    def relative(self, name: str, with_bench: bool = False) -> float | None:
        """The bound as a fraction of the value (with the bench's share, in quadrature);
        ``None`` when undetermined."""
        q = self.quantities[name]
        if not q.determined:
            return None
        return math.hypot(q.stderr, self.bench.get(name, 0.0) if with_bench else 0.0) / abs(q.value)


@dataclass(frozen=True)
class Expected:
    """The circuit a sweep is planned for: a model of :mod:`fitkit.topologies` and its values.

    Attributes
    ----------
    r_ohm, l_h, c_f : float
        Loss, inductance and capacitance (for a tank: the coil's series loss and the
        capacitance across it).
    model : str
        ``series``, ``tank`` or ``coil``, as for ``fitkit fit --model``.
    c_self_f : float or None
        A coil's self-capacitance (``coil`` only).
    r_dc_ohm : float or None
        The coil's resistance at low frequency (an ohmmeter's reading), below ``r_ohm``:
        the loss then grows as ``R_dc + k sqrt(f)`` to ``r_ohm`` at the resonance (the
        ``-sqrtf`` models of ``fitkit fit``).
    """

    r_ohm: float
    l_h: float
    c_f: float
    model: str = "series"
    c_self_f: float | None = None
    r_dc_ohm: float | None = None

    def __post_init__(self) -> None:
        _check_circuit(self.r_ohm, self.l_h, self.c_f)
        get_topology(self.model)
        if (self.model == "coil") != (self.c_self_f is not None):
            raise SetupError(
                "a coil with self-capacitance needs its expected self-capacitance, and only "
                "that model takes one",
                remedy="give --model coil with --c-self (e.g. 8p), or drop --c-self",
            )
        for name in ("c_self_f", "r_dc_ohm"):
            value = getattr(self, name)
            if value is not None and not (math.isfinite(value) and value > 0):
                raise SetupError(f"the expected {name} must be above zero, not {value!r}")
        if self.r_dc_ohm is not None and not self.r_dc_ohm < self.r_ohm:
            raise SetupError(
                f"the dc resistance {format_quantity(self.r_dc_ohm, 'ohm')} must lie below the "
                f"loss at the resonance, {format_quantity(self.r_ohm, 'ohm')}",
                remedy="give --r the loss at the resonance and --r-dc the ohmmeter's reading",
            )

    @property
    def topology(self):
        return get_topology(self.model + ("-sqrtf" if self.r_dc_ohm is not None else ""))

    def describe(self) -> str:
        """The model in words, e.g. ``'series R-L-C'``."""
        text = self.topology.label
        if self.c_self_f is not None:
            text += f", self-capacitance {format_quantity(self.c_self_f, 'F')}"
        if self.r_dc_ohm is not None:
            text = text.replace(", loss r_dc + k sqrt(f)", "")
            text += (
                f", loss growing as R_dc + k sqrt(f) from {format_quantity(self.r_dc_ohm, 'ohm')}"
            )
        return text

    def internal(self, setup: Setup) -> np.ndarray:
        """The fit's log parameters for this circuit: ln f0, ln q, ln scale[, ln f_self]."""
        w0 = 1.0 / math.sqrt(self.l_h * self.c_f)
        if self.model == "tank":
            q = w0 * self.l_h / self.r_ohm
            scale = q * q * self.r_ohm
        else:
            scale = self.r_ohm + setup.external_ohm
            q = w0 * self.l_h / scale
        out = [math.log(w0 / TWO_PI), math.log(q), math.log(scale)]
        if self.model == "coil":
            out.append(-0.5 * math.log(self.l_h * self.c_self_f) - math.log(TWO_PI))
        if self.r_dc_ohm is not None:
            out.append(math.log(self.r_ohm / self.r_dc_ohm - 1.0))  # the skin share x
        return np.array(out)


class _Planned:
    """The forward model and every reported value, as functions of the log parameters."""

    def __init__(self, setup: Setup, expected: Expected):
        self.setup, self.expected, self.topology = setup, expected, expected.topology
        base = expected.internal(setup)
        self.names = ["lnf0", "lnq", "lnscale"] + [f"ln_{e}" for e in self.topology.extras]
        if not setup.is_calibrated:
            self.names.append("lngain")
            base = np.append(base, 0.0)
        self.base = base

    def _state(self, p: np.ndarray) -> tuple:
        f0, q, scale = (math.exp(x) for x in p[:3])
        extras = {e: math.exp(p[3 + i]) for i, e in enumerate(self.topology.extras)}
        gain = math.exp(p[-1]) if not self.setup.is_calibrated else 1.0
        return f0, q, scale, extras, gain

    def response(self, p: np.ndarray, freq_hz: np.ndarray) -> np.ndarray:
        f0, q, scale, extras, gain = self._state(p)
        return predicted(
            self.setup,
            freq_hz,
            f0,
            q,
            scale,
            topology=self.topology,
            extras=extras,
            gain=gain,
        )

    def values(self, p: np.ndarray) -> dict:
        f0, q, scale, extras, _ = self._state(p)
        comps = self.topology.components(self.setup, f0, q, scale, extras)
        out = {**comps, **self.topology.derived(self.setup, f0, q, comps)}
        return {n: float(out[n]) for n in QUANTITIES if n in out}

    def jacobian(self, freq_hz: np.ndarray) -> np.ndarray:
        """Columns ``dm / d p_i`` at the expected circuit."""
        return np.column_stack([self._difference(lambda p: self.response(p, freq_hz), i)
                                for i in range(self.base.size)])  # fmt: skip

    def log_gradients(self) -> dict:
        """``d ln(value) / d p`` for every reported value."""
        logs = lambda p: {n: math.log(abs(v)) for n, v in self.values(p).items()}  # noqa: E731
        names = list(self.values(self.base))
        cols = [self._difference(lambda p: np.array([logs(p)[n] for n in names]), i)
                for i in range(self.base.size)]  # fmt: skip
        grads = np.column_stack(cols)
        return {n: grads[k] for k, n in enumerate(names)}

    def _difference(self, func, i: int):
        step = np.zeros(self.base.size)
        step[i] = _STEP
        return (func(self.base + step) - func(self.base - step)) / (2.0 * _STEP)


def cramer_rao(
    setup: Setup,
    freq_hz: np.ndarray,
    r_ohm: float,
    l_h: float,
    c_f: float,
    noise: Noise,
    *,
    complex_data: bool = True,
    known: dict | None = None,
    model: str = "series",
    c_self_f: float | None = None,
    r_dc_ohm: float | None = None,
) -> Bounds:
    """The Cramer-Rao lower bound for a circuit measured through a setup.

    Parameters
    ----------
    setup : Setup
        The bench arrangement (any of :data:`fitkit.setups.BENCHES`).
    freq_hz : ndarray
        The sweep's frequencies.
    r_ohm, l_h, c_f : float
        The expected circuit.
    noise : Noise
        ``additive``: sigma per real and per imaginary part (or of the magnitude) in the
        measured unit; ``relative``: sigma of ln|m| in nepers and of the phase in radians.
    complex_data : bool
        Phase is measured too; otherwise magnitude only.
    known : dict, optional
        Values measured otherwise, ``{"L": (value, stderr)}``, entered as independent
        information (a zero stderr counts as 1 ppm).
    model, c_self_f, r_dc_ohm
        The circuit model (``series``, ``tank``, ``coil``), a coil's self-capacitance and
        its dc resistance (the loss then grows as sqrt(f)), as for :class:`Expected`.

    Returns
    -------
    Bounds

    Raises
    ------
    SetupError
        Non-positive component values, or a noise level that is not positive.

    Examples
    --------
    >>> s = Setup("divider", "ratio", sense_ohm=50.0)
    >>> f = np.linspace(480e3, 530e3, 201)
    >>> b = cramer_rao(s, f, 5.0, 100e-6, 1e-9, Noise("additive", 1e-3))
    >>> 0 < b.relative("L") < 0.01
    True
    """
    _check_noise(noise, complex_data)
    planned = _Planned(setup, Expected(r_ohm, l_h, c_f, model, c_self_f, r_dc_ohm))
    f = np.asarray(freq_hz, dtype=np.float64)
    jac = _whitened(planned.response(planned.base, f), planned.jacobian(f), noise, complex_data)
    grads = planned.log_gradients()
    priors = [_prior_row(name, v, s, grads) for name, (v, s) in (known or {}).items()]
    cov, null = _covariance(jac, priors)
    values = planned.values(planned.base)
    quantities = {}
    for name in values:
        g = grads[name]
        if null.size and np.linalg.norm(null.T @ g) > _LEAK * np.linalg.norm(g):
            quantities[name] = Quantity(name, None, None, _why_undetermined(setup))
            continue
        rel = math.sqrt(max(float(g @ cov @ g), 0.0))
        quantities[name] = Quantity(name, values[name], rel * abs(values[name]))
    bench = _bench_shares(planned, f, noise, complex_data)
    return Bounds(
        quantities, f, planned.names, cov, {n: bench[n] for n in quantities if n in bench}
    )


def _bench_shares(planned: _Planned, freq_hz: np.ndarray, noise: Noise, complex_data) -> dict:
    """Each value's standard uncertainty from the bench values' stated ones, as a fit of
    the noise-free planned sweep would carry them (:mod:`fitkit.setup_uncertainty`)."""
    setup = planned.setup
    if not setup.uncertainty or not setup.is_calibrated:
        return {}
    from fitkit.problem import FitProblem  # (lmfit and scipy only when a share is asked)
    from fitkit.setup_uncertainty import setup_rows

    m = planned.response(planned.base, freq_hz)
    sweep = Sweep(freq_hz, m if complex_data else np.abs(m), setup.kind, source="planned sweep")
    problem = FitProblem(sweep, setup, planned.topology, {})
    values = {**dict(zip(planned.names, map(float, planned.base))), "gain": 1.0}
    rows = setup_rows(problem, values, planned.names, np.arange(freq_hz.size), noise)
    names = {n for gradient, _ in rows for n in gradient}
    return {n: math.sqrt(sum((g.get(n, 0.0) * u) ** 2 for g, u in rows)) for n in names}


def resonance(
    setup: Setup, r_ohm: float, l_h: float, c_f: float, model: str = "series", **extra
) -> tuple:
    """Resonance (Hz) and loaded Q of the expected circuit on this bench.

    ``extra`` takes ``c_self_f`` and ``r_dc_ohm`` as for :class:`Expected`.

    Raises
    ------
    SetupError
        When R, L or C is not above zero.
    """
    planned = _Planned(setup, Expected(r_ohm, l_h, c_f, model, **extra))
    values = planned.values(planned.base)
    return values["f0"], values["Q_loaded"]


def _check_circuit(r_ohm: float, l_h: float, c_f: float) -> None:
    for name, value, unit in (("R", r_ohm, "ohm"), ("L", l_h, "H"), ("C", c_f, "F")):
        if not (math.isfinite(value) and value > 0):
            raise SetupError(
                f"the expected {name} must be above zero, not {value!r} {unit}",
                remedy="give the circuit you expect, e.g. R=5, L=100u, C=1n",
            )


def _check_noise(noise: Noise, complex_data: bool) -> None:
    sigmas = [noise.sigma]
    if complex_data and noise.domain == "relative":
        sigmas.append(noise.sigma_phase_rad)
    if not all(s is not None and math.isfinite(s) and s > 0 for s in sigmas):
        raise SetupError(
            "the planned noise level must be stated and above zero",
            remedy="give e.g. --noise 1e-3 (additive) or --noise 0.05dB,0.3deg",
        )


def _whitened(m: np.ndarray, dm: np.ndarray, noise: Noise, complex_data: bool) -> np.ndarray:
    """Rows: d(residual)/d(parameter), each divided by its sigma."""
    if noise.domain == "relative":
        dlog = dm / m[:, None]
        parts = [dlog.real / noise.sigma]
        if complex_data:
            parts.append(dlog.imag / noise.sigma_phase_rad)
    elif complex_data:
        parts = [dm.real / noise.sigma, dm.imag / noise.sigma]
    else:
        parts = [(np.conj(m)[:, None] * dm).real / (np.abs(m)[:, None] * noise.sigma)]
    return np.vstack(parts)


def _prior_row(name: str, value: float, stderr: float, grads: dict) -> np.ndarray:
    """A known value as one more whitened row: information on ln(value)."""
    if name not in ("R", "L", "C") or not value > 0:
        raise SetupError(
            f"cannot take a known value {name}={value!r}",
            remedy="give a known R, L or C above zero, e.g. L=100u+-0.5u",
        )
    rel = max(stderr / value, _EXACT_KNOWN)
    return grads[name] / rel


def _covariance(jac: np.ndarray, priors: list) -> tuple:
    """Bound on the parameter covariance, and the undetermined directions (columns)."""
    stack = np.vstack([jac] + [p[None, :] for p in priors])
    scale = np.linalg.norm(stack, axis=0)
    scale[scale == 0] = 1.0
    # the small triangular factor has the same singular values and right vectors
    tri = np.linalg.qr(stack / scale, mode="r")
    _, s, vt = np.linalg.svd(tri)
    keep = s > _SINGULAR * s[0]
    # pseudo-inverse on the determined directions, in the column-scaled coordinates
    inner = vt[keep].T @ np.diag(1.0 / s[keep] ** 2) @ vt[keep]
    cov = inner / np.outer(scale, scale)
    null = (vt[~keep] / scale).T  # open directions in the log parameters, as columns
    if null.size:
        null = null / np.linalg.norm(null, axis=0)
    return cov, null


def _why_undetermined(setup: Setup) -> str:
    if not setup.is_calibrated:
        return (
            "an uncalibrated sweep fixes only f0 and the loaded Q; add a scale "
            "(calibrated ratio, generator amplitude) or a known L or C"
        )
    return "the sweep does not determine it (the Fisher matrix is singular)"


@dataclass(frozen=True)
class Plan:
    """The cheapest sweep on the planner's grid that reaches a requested precision.

    Attributes
    ----------
    target : str
        The value asked about (a name in :data:`BOUNDED` or the model's extras).
    target_rel : float
        The requested relative standard deviation.
    shape : SweepShape or None
        The cheapest sweep found (fewest points; then the smallest bound), or ``None``.
    bounds : Bounds or None
        The bounds for that sweep.
    averages : int
        When no sweep on the grid reaches the target: how many sweeps of the best shape
        to average (noise down by the square root) to reach it; else 1.
    reason : str
        Why the target cannot be reached at all, when it cannot.
    """

    target: str
    target_rel: float
    shape: SweepShape | None
    bounds: Bounds | None
    averages: int = 1
    reason: str = ""


def plan_sweep(
    setup: Setup,
    r_ohm: float,
    l_h: float,
    c_f: float,
    noise: Noise,
    target: str,
    target_rel: float,
    *,
    complex_data: bool = True,
    spacing: str = "linear",
    offset_bw: float = 0.0,
    known: dict | None = None,
    **model,
) -> Plan:
    """Search spans and point counts for the cheapest sweep that reaches a precision.

    Parameters
    ----------
    setup, r_ohm, l_h, c_f, noise, complex_data, known
        As for :func:`cramer_rao`.
    **model
        ``model``, ``c_self_f``, ``r_dc_ohm`` as for :func:`cramer_rao`.
    target : str
        The value to pin down, e.g. ``"L"`` or ``"Q"``.
    target_rel : float
        Its wanted relative standard deviation, e.g. 0.005 for 0.5%.
    spacing, offset_bw
        Held fixed while the span (:data:`PLAN_SPANS_BW`) and the point count
        (:data:`PLAN_POINTS`) are searched.

    Returns
    -------
    Plan
        Fewest points first (the cost of a sweep), then the smallest bound.

    Raises
    ------
    SetupError
        An unknown target or a target precision that is not above zero.
    """
    if target not in BOUNDED + OPTIONAL:
        raise SetupError(
            f"cannot plan for {target!r}",
            remedy="name one of: " + ", ".join(BOUNDED + OPTIONAL),
        )
    if not (math.isfinite(target_rel) and target_rel > 0):
        raise SetupError(f"the target precision must be above zero, not {target_rel!r}")
    f0, ql = resonance(setup, r_ohm, l_h, c_f, **model)
    best = None  # (rel, shape, bounds)
    for points in PLAN_POINTS:
        found = None
        for span in PLAN_SPANS_BW:
            shape = SweepShape(span, points, spacing, offset_bw)
            b = cramer_rao(
                setup,
                shape.frequencies(f0, ql),
                r_ohm,
                l_h,
                c_f,
                noise,
                complex_data=complex_data,
                known=known,
                **model,
            )
            if target not in b.quantities:
                raise SetupError(
                    f"a {model.get('model', 'series')} circuit has no {QUANTITIES[target][1]}",
                    remedy="plan for a value the model has, or choose the model that has it",
                )
            rel = b.relative(target, with_bench=True)
            if rel is None:
                return Plan(target, target_rel, None, None, 1, b[target].reason)
            floor = b.bench.get(target, 0.0) / abs(b[target].value)
            if floor >= target_rel:
                return Plan(target, target_rel, None, b, 1, _bench_floor(target, floor))
            if best is None or rel < best[0]:
                best = (rel, shape, b)
            if rel <= target_rel and (found is None or rel < found[0]):
                found = (rel, shape, b)
        if found is not None:
            return Plan(target, target_rel, found[1], found[2])
    # averaging lowers the sweep's share only: (bound^2 / n) + bench^2 <= target^2
    b = best[2]
    own, floor = b.relative(target), b.bench.get(target, 0.0) / abs(b[target].value)
    averages = math.ceil(own**2 / (target_rel**2 - floor**2))
    return Plan(target, target_rel, best[1], best[2], averages)


def _bench_floor(target: str, floor: float) -> str:
    return (
        f"the bench values' stated uncertainties alone give {QUANTITIES[target][1]} "
        f"{100.0 * floor:.3g}%, and no sweep lowers that share; measure them better (the "
        "sense resistor on a good meter, the channels' gains against each other)"
    )
