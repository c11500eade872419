"""One fitting problem: a sweep, its bench, a circuit model, the known values.

Internal parameters are the well-conditioned ones of :mod:`fitkit.topologies`: ln f0,
ln Q, ln of a scale resistance (and the topology's extras), a gain for an uncalibrated
sweep, and the bench terms of :mod:`fitkit.nuisance` switched on for this sweep. The
class gives the model, the residuals in a noise domain, the parameters with their
search ranges, the fitting passes and the outlier step; :mod:`fitkit.fitting` turns the
last pass into a :class:`~fitkit.result.CircuitFit`.
"""

from __future__ import annotations

import math

import lmfit
import numpy as np
from scipy.optimize import least_squares
from uncertainties import ufloat, umath

from fitkit.errors import FitError
from fitkit.estimate import Start, estimate_start, predicted, resonance_side
from fitkit.noise import Noise
from fitkit.nuisance import BOUNDS, NEUTRAL, PARAMETER, Bench
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.topologies import Topology
from fitkit.units import format_quantity

OUTLIER_LIMIT = 6.0  # robust standard deviations
_MAX_OUTLIER_SHARE = 0.05
_STEERING = 0.2  # hat value above which a point is never dropped
_SINGULAR = 1e-6  # relative singular value below which a direction is not determined
UNIT_NOISE = 1.0


def varied(params: lmfit.Parameters) -> list:
    return [name for name, p in params.items() if p.vary]


class FirstPass:
    """A fit on the points kept, and what it found on the way."""

    def __init__(self, params, redchi, used, outliers, start: Start, null_dirs, domain):
        self.params, self.redchi, self.used, self.outliers = params, redchi, used, outliers
        self.start, self.null_dirs, self.domain = start, null_dirs, domain
        self.outlier_reasons: list = []


class FitProblem:
    """One sweep, one setup, one topology, the known values, the bench terms."""

    def __init__(
        self, sweep: Sweep, setup: Setup, topology: Topology, known: dict, terms: tuple = ()
    ):
        self.sweep, self.setup, self.topology = sweep, setup, topology
        self.known = known
        self.bench = Bench(sweep, terms)
        self.forced = True  # the user named the model (not chosen among candidates)
        self.f = sweep.freq_hz
        self.data = sweep.values
        # each point's own sigma over their median (None: all alike); every pass, with
        # unit or stated noise, weights by it
        self.spread = None if sweep.sigma is None else sweep.sigma / np.median(sweep.sigma)
        self.coefficients = setup.coefficients(self.f)
        # generous bounds keep a wandering candidate model finite; a fit that ends on
        # one is reported (values at a bound are not trusted)
        lo, hi = math.log(self.f[0]), math.log(self.f[-1])
        self.bounds = {"lnf0": (lo - 3.0, hi + 3.0), "lnq": (-5.0, 16.0), "lnscale": (-14.0, 28.0)}
        self.bounds.update({f"ln_{e}": (lo - 5.0, hi + 7.0) for e in topology.extras})
        if "skin" in topology.extras:
            self.bounds["ln_skin"] = (-9.0, 9.0)
        self.bounds.update({PARAMETER[t]: BOUNDS[PARAMETER[t]] for t in self.bench.terms})

    def with_terms(self, terms: tuple) -> FitProblem:
        """The same problem with other bench terms switched on."""
        other = FitProblem(self.sweep, self.setup, self.topology, self.known, terms)
        other.forced = self.forced
        return other

    # -- the model in internal parameters -------------------------------------------------
    def state(self, values: dict) -> tuple:
        values = {
            k: min(max(v, self.bounds[k][0]), self.bounds[k][1]) if k in self.bounds else v
            for k, v in values.items()
        }
        f0 = math.exp(values["lnf0"])
        q = math.exp(values["lnq"])
        if self.known:
            ((name, (value, _)),) = self.known.items()
            scale = self.topology.scale_from_known(self.setup, name, value, f0, q)
        else:
            scale = math.exp(values["lnscale"])
        extras = {e: math.exp(values[f"ln_{e}"]) for e in self.topology.extras}
        return f0, q, scale, extras, values["gain"], values

    def model(self, values: dict, idx=slice(None)) -> np.ndarray:
        f0, q, scale, extras, gain, clipped = self.state(values)
        if isinstance(idx, slice) or idx.size == self.f.size:
            coefficients = self.coefficients  # every point: no copy
        else:
            coefficients = tuple(c[idx] for c in self.coefficients)
        m = predicted(
            self.setup,
            self.f[idx],
            f0,
            q,
            scale,
            topology=self.topology,
            extras=extras,
            gain=gain,
            coefficients=coefficients,
        )
        return self.bench.apply(m, self.f[idx], clipped) if self.bench.terms else m

    def raw_residual(self, values: dict, idx, domain: str) -> tuple:
        """Unweighted residual components: (magnitude or real part, phase or imaginary)."""
        m = self.model(values, idx)
        d = self.data[idx]
        if not np.iscomplexobj(d):
            m = np.abs(m)
        if domain == "additive":
            r = m - d
            return (r.real, r.imag) if np.iscomplexobj(d) else (r.real, None)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = m / d
        if np.iscomplexobj(d):
            lr = np.log(ratio)
            return lr.real, lr.imag
        return np.log(np.abs(ratio)), None

    def scaled_residual(self, values: dict, idx, domain: str) -> tuple:
        """The raw residual over each point's spread (as it is when all are alike)."""
        a, b = self.raw_residual(values, idx, domain)
        if self.spread is None:
            return a, b
        return a / self.spread[idx], None if b is None else b / self.spread[idx]

    def residual(self, params, idx, noise: Noise) -> np.ndarray:
        return self.residual_values(params.valuesdict(), idx, noise)

    def residual_values(self, values: dict, idx, noise: Noise) -> np.ndarray:
        a, b = self.scaled_residual(values, idx, noise.domain)
        parts = [a / noise.sigma]
        if b is not None:
            phase_sigma = noise.sigma if noise.domain == "additive" else noise.sigma_phase_rad
            parts.append(b / phase_sigma)
        out = np.concatenate(parts)
        return np.where(np.isfinite(out), out, 1e6)

    def reported(self, val: dict, scale=None) -> dict:
        """Every reported value from internal values (plain or ``uncertainties``
        numbers); ``scale`` stands in for the scale resistance when the sweep leaves it
        open. A known value pins the scale, its own uncertainty carried on."""
        f0, q = umath.exp(val["lnf0"]), umath.exp(val["lnq"])
        if self.known:
            ((name, (value, stderr)),) = self.known.items()
            exact_or_uncertain = ufloat(value, stderr) if stderr else value
            scale = self.topology.scale_from_known(self.setup, name, exact_or_uncertain, f0, q)
        elif scale is None:
            scale = umath.exp(val["lnscale"])
        extras = {e: umath.exp(val[f"ln_{e}"]) for e in self.topology.extras}
        comps = self.topology.components(self.setup, f0, q, scale, extras)
        derived = self.topology.derived(self.setup, f0, q, comps)
        return {**comps, **derived, **self.bench.reported(val)}

    # -- parameters and identifiability --------------------------------------------------
    def parameters(self, start: Start) -> tuple:
        params = lmfit.Parameters()
        params.add("lnf0", value=math.log(start.f0_hz))
        params.add("lnq", value=math.log(min(max(start.q, 0.02), 1e6)))
        params.add("lnscale", value=math.log(start.scale_ohm), vary=not self.known)
        for name in self.topology.extras:
            params.add(f"ln_{name}", value=math.log(start.extras[name]))
        for term in self.bench.terms:
            params.add(PARAMETER[term], value=NEUTRAL[PARAMETER[term]])
        for name, (low, high) in self.bounds.items():
            params[name].set(min=low, max=high)
        params.add("gain", value=start.gain, vary=not self.setup.is_calibrated)
        null_dirs = self.null_directions(params)
        if null_dirs and params["lnscale"].vary:
            # the scale is what an uncalibrated sweep leaves open: hold it, keep the shape
            params["lnscale"].vary = False
            null_dirs = self.null_directions(params) or null_dirs
            if self.null_directions(params):
                raise FitError(
                    f"the sweep cannot determine the resonance and Q of a {self.topology.label}",
                    remedy="sweep across the resonance with more points",
                    path=self.sweep.source,
                )
        return params, null_dirs

    def jacobian(self, values: dict, names: list, idx, noise: Noise, central=False):
        """The residual's Jacobian by finite differences in the internal parameters."""
        r0 = None if central else self.residual_values(values, idx, noise)
        cols = []
        for name in names:
            step = (1e-5 if central else 1e-6) * max(1.0, abs(values[name]))
            up = self.residual_values({**values, name: values[name] + step}, idx, noise)
            if central:
                down = self.residual_values({**values, name: values[name] - step}, idx, noise)
                cols.append((up - down) / (2.0 * step))
            else:
                cols.append((up - r0) / step)
        return np.column_stack(cols)

    def null_directions(self, params: lmfit.Parameters) -> list:
        """Directions in the internal parameters that the sweep does not determine."""
        names = varied(params)
        idx = np.arange(self.sweep.points)
        jac = self.jacobian(params.valuesdict(), names, idx, Noise("additive", UNIT_NOISE))
        norms = np.linalg.norm(jac, axis=0)
        norms[norms == 0] = 1.0
        _, s, vt = np.linalg.svd(jac / norms, full_matrices=False)
        return [dict(zip(names, vt[i] / norms)) for i in range(len(s)) if s[i] < _SINGULAR * s[0]]

    # -- fitting passes -------------------------------------------------------------------
    def quick_minimize(self, params, idx, noise: Noise) -> tuple:
        """Levenberg-Marquardt straight on scipy, for the passes that need no covariance;
        the parameters are updated in place."""
        names = varied(params)
        base = params.valuesdict()

        def fun(x):
            return self.residual_values({**base, **dict(zip(names, x))}, idx, noise)

        sol = least_squares(fun, [base[n] for n in names], method="lm", x_scale="jac")
        for name, value in zip(names, sol.x):
            low, high = self.bounds.get(name, (-np.inf, np.inf))
            params[name].value = min(max(value, low), high)
        nfree = max(sol.fun.size - len(names), 1)
        return params, float(2.0 * sol.cost / nfree)

    def minimize(self, params, idx, noise: Noise, scale_covar: bool = True):
        return lmfit.minimize(
            self.residual, params, args=(idx, noise), method="leastsq", scale_covar=scale_covar
        )

    def first_pass(self, domain: str, keep_outliers: bool) -> FirstPass:
        """Start, identifiability, a fit with unit weights, outliers out and refit."""
        start = estimate_start(self.sweep, self.setup, self.topology)
        self.check_inside(start.f0_hz, "the first estimate of the resonance")
        params, null_dirs = self.parameters(start)
        unit = Noise(domain, UNIT_NOISE, UNIT_NOISE)
        used = np.arange(self.sweep.points)
        params, redchi = self.quick_minimize(params, used, unit)
        if not self.f[0] <= math.exp(params["lnf0"].value) <= self.f[-1]:
            # the refinement left the sweep: try once more from the sweep's extremum and
            # keep that minimum if it stays inside (a resonance outside is refused anyway)
            second = estimate_start(self.sweep, self.setup, self.topology, from_extremum=True)
            retry, retry_redchi = self.quick_minimize(self.parameters(second)[0], used, unit)
            if self.f[0] <= math.exp(retry["lnf0"].value) <= self.f[-1]:
                params, redchi, start = retry, retry_redchi, second
        first = FirstPass(params, redchi, used, np.array([], dtype=int), start, null_dirs, domain)
        return first if keep_outliers else self.drop_outliers(first)

    def refine(self, first: FirstPass, params, domain: str | None = None) -> FirstPass:
        """Another unit-weight pass from ``params`` on the points ``first`` kept."""
        domain = domain or first.domain
        unit = Noise(domain, UNIT_NOISE, UNIT_NOISE)
        params, redchi = self.quick_minimize(params, first.used, unit)
        out = FirstPass(
            params, redchi, first.used, first.outliers, first.start, first.null_dirs, domain
        )
        out.outlier_reasons = first.outlier_reasons
        return out

    def drop_outliers(self, first: FirstPass) -> FirstPass:
        """Points far from the first fit by a robust measure, and with little leverage,
        out; then refit. A point that steers the fit is kept whatever its residual: it is
        often the one point that shows the resonance. Steering is a hat value (Hoaglin &
        Welsch, Am. Stat. 32, 1978) above ``_STEERING``: Huber (Robust Statistics, 1981,
        from memory) counts 0.2 to 0.5 as risky and above 0.5 as a point that fixes its
        own fitted value."""
        idx, domain = first.used, first.domain
        # judged against each point's own scatter
        a, b = self.scaled_residual(first.params.valuesdict(), idx, domain)
        flagged = np.zeros(idx.size, dtype=bool)
        size = np.zeros(idx.size)
        for comp in [a] if b is None else [a, b]:
            mad = 1.4826 * np.median(np.abs(comp - np.median(comp)))
            if mad > 0:
                dev = np.abs(comp - np.median(comp)) / mad
                flagged |= dev > OUTLIER_LIMIT
                size = np.maximum(size, dev)
        if not flagged.any() or flagged.sum() > _MAX_OUTLIER_SHARE * idx.size:
            return first
        leverage = self.leverage(first.params, idx, domain)
        steering = leverage > _STEERING
        drop = flagged & ~steering
        if not drop.any():
            return first
        first.outlier_reasons = [
            f"{format_quantity(self.f[i], 'Hz')} ({s:.0f} robust standard deviations "
            "from the first fit, not steering it)"
            for i, s in zip(idx[drop], size[drop])
        ]
        first.outliers = idx[drop]
        first.used = np.setdiff1d(idx, idx[drop])
        kept_reasons = first.outlier_reasons
        first = self.refine(first, first.params)
        first.outlier_reasons = kept_reasons
        return first

    def leverage(self, params, idx, domain: str) -> np.ndarray:
        """Each point's hat value (summed over its real and imaginary rows)."""
        names = varied(params)
        jac = self.jacobian(params.valuesdict(), names, idx, Noise(domain, UNIT_NOISE, UNIT_NOISE))
        q, _ = np.linalg.qr(jac)
        hat = np.sum(q**2, axis=1)
        return hat.reshape(-1, idx.size).sum(axis=0)

    def estimate_noise(self, first: FirstPass) -> Noise:
        """Noise from the residuals of the first pass, magnitude and phase apart (the
        level by which each point's spread is multiplied, when the sweep has one)."""
        domain = first.domain
        a, b = self.scaled_residual(first.params.valuesdict(), first.used, domain)
        ncomp = 1 if b is None else 2
        nvary = len(varied(first.params))
        dof_share = max(1.0 - nvary / (ncomp * first.used.size), 0.5)
        if domain == "additive" and b is not None:
            sigma = math.sqrt(np.mean(np.concatenate([a, b]) ** 2) / dof_share)
            return Noise(domain, max(sigma, 1e-300))
        sigma = math.sqrt(np.mean(a**2) / dof_share)
        phase = None if b is None else max(math.sqrt(np.mean(b**2) / dof_share), 1e-15)
        return Noise(domain, max(sigma, 1e-300), phase)

    def covariance_at(self, result, idx, noise: Noise):
        """(J^T J)^-1 from central differences, when lmfit's own estimate failed (a
        minimum so sharp that its forward-difference Jacobian lost precision)."""
        names = varied(result.params)
        jac = self.jacobian(result.params.valuesdict(), names, idx, noise, central=True)
        try:
            cov = np.linalg.inv(jac.T @ jac)
        except np.linalg.LinAlgError:
            return None
        if not (np.all(np.isfinite(cov)) and np.all(np.diag(cov) > 0)):
            return None
        return cov * (result.redchi if not noise.stated else 1.0)

    # -- the resonance must lie inside the sweep ------------------------------------------
    def check_inside(self, f0: float, what: str) -> None:
        if self.f[0] <= f0 <= self.f[-1]:
            return
        side = resonance_side(self.sweep, self.setup, self.topology) or (
            "above" if f0 > self.f[-1] else "below"
        )
        bound = self.f[-1] if side == "above" else self.f[0]
        lo, hi = format_quantity(self.f[0], "Hz"), format_quantity(self.f[-1], "Hz")
        error = FitError(
            f"{what} lies {side} {format_quantity(bound, 'Hz')}, outside the sweep "
            f"({lo} to {hi}), read as a {self.topology.label}",
            remedy=f"sweep again {'higher' if side == 'above' else 'lower'}, across the "
            "resonance (a few bandwidths each side)"
            + (
                "; if the sweep does cover it, the circuit model may be wrong: try --model auto"
                if self.forced
                else "; check the setup values (a wrong bench makes any model miss)"
            ),
            path=self.sweep.source,
        )
        error.outside, error.bound_hz = side, float(bound)
        raise error
