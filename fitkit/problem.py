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
from scipy.optimize import leastsq

from fitkit.errors import FitError
from fitkit.estimate import Start, estimate_start, predicted, resonance_side
from fitkit.jacobian import circuit_state, residual_jacobian
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
_OPEN = (-np.inf, np.inf)
#: lmfit Parameters by (names, free names), reset for each pass
_TEMPLATES: dict = {}


def varied(params: lmfit.Parameters) -> list:
    return [name for name, p in params.items() if p.vary]


class FirstPass:
    """A fit on the points kept, and what it found on the way: the internal ``values``
    (every parameter, held ones too) and the names of the ``free`` ones."""

    def __init__(self, values, free, redchi, used, outliers, start: Start, null_dirs, domain):
        self.values, self.free, self.redchi = values, tuple(free), redchi
        self.used, self.outliers = used, outliers
        self.start, self.null_dirs, self.domain = start, null_dirs, domain
        self.outlier_reasons: list = []
        #: the lmfit result of this pass, when lmfit ran it (with unit weights, no bounds
        #: reached): the last pass need not run again if the weights stay even
        self.result = None

    def moved(self, values: dict, free=None, redchi=None, domain=None) -> FirstPass:
        """The same pass at other values (and free names, domain)."""
        out = FirstPass(
            values,
            self.free if free is None else free,
            self.redchi if redchi is None else redchi,
            self.used,
            self.outliers,
            self.start,
            self.null_dirs,
            domain or self.domain,
        )
        out.outlier_reasons = self.outlier_reasons
        return out


class FitProblem:
    """One sweep, one setup, one topology, the known values, the bench terms."""

    def __init__(
        self, sweep: Sweep, setup: Setup, topology: Topology, known: dict, terms: tuple = ()
    ):
        self.sweep, self.setup, self.topology = sweep, setup, topology
        self.known = known
        self.bench = Bench(sweep, terms)
        self.forced = True  # the user named the model (not chosen among candidates)
        #: the first solve runs on lmfit and may stand as the last pass: a model the user
        #: named with the noise estimated, or the one circuit auto is sure to fit in full
        self.may_keep_first = True
        self.f = sweep.freq_hz
        self.data = sweep.values
        # each point's own sigma over their median (None: all alike); every pass, with
        # unit or stated noise, weights by it
        self.spread = None if sweep.sigma is None else sweep.sigma / np.median(sweep.sigma)
        self.coefficients = setup.coefficients(self.f)
        self._subset = (None, None)
        self._last_model = (None, None, None)  # (values, points, reading): see model()
        # generous bounds keep a wandering candidate model finite; a fit that ends on
        # one is reported (values at a bound are not trusted)
        lo, hi = math.log(self.f[0]), math.log(self.f[-1])
        self.bounds = {"lnf0": (lo - 3.0, hi + 3.0), "lnq": (-5.0, 16.0), "lnscale": (-14.0, 28.0)}
        self.bounds.update({f"ln_{e}": (lo - 5.0, hi + 7.0) for e in topology.extras})
        if "skin" in topology.extras:
            self.bounds["ln_skin"] = (-9.0, 9.0)
        self.bounds.update({PARAMETER[t]: BOUNDS[PARAMETER[t]] for t in self.bench.terms})

    def with_terms(
        self, terms: tuple, topology: Topology | None = None, setup: Setup | None = None
    ) -> FitProblem:
        """The same problem with other bench terms switched on (and another topology, or
        the same bench with other fixture values)."""
        other = FitProblem(
            self.sweep, setup or self.setup, topology or self.topology, self.known, terms
        )
        other.forced, other.may_keep_first = self.forced, self.may_keep_first
        return other

    # -- the model in internal parameters -------------------------------------------------
    def clipped(self, values: dict) -> dict:
        """``values`` held within their search bounds (the model reads them so)."""
        return {
            k: min(max(v, self.bounds[k][0]), self.bounds[k][1]) if k in self.bounds else v
            for k, v in values.items()
        }

    def at(self, idx) -> tuple:
        """Frequencies and bench coefficients at the points ``idx`` (every point: no
        copy; the last subset is kept, as the passes ask for the same one many times)."""
        if isinstance(idx, slice) or idx.size == self.f.size:
            return self.f, self.coefficients
        if idx is not self._subset[0]:
            self._subset = (idx, (self.f[idx], tuple(c[idx] for c in self.coefficients)))
        return self._subset[1]

    def model(self, values: dict, idx=slice(None)) -> np.ndarray:
        """The reading at the points ``idx``. The last one is kept (read-only): the
        checks on a finished pass ask for the same values and points about ten times."""
        whole = isinstance(idx, slice) or idx.size == self.f.size
        key = (tuple(values.items()), None if whole else idx)
        last_key, last_idx, reading = self._last_model
        if key[0] == last_key and key[1] is last_idx:
            return reading
        reading = self._evaluate(values, idx)
        reading.flags.writeable = False
        self._last_model = (key[0], key[1], reading)
        return reading

    def _evaluate(self, values: dict, idx) -> np.ndarray:
        clipped = self.clipped(values)
        f0, q, scale, extras, _ = circuit_state(self, clipped)
        f, coefficients = self.at(idx)
        m = predicted(
            self.setup,
            f,
            f0,
            q,
            scale,
            topology=self.topology,
            extras=extras,
            gain=clipped["gain"],
            coefficients=coefficients,
        )
        return self.bench.apply(m, f, clipped) if self.bench.terms else m

    def raw_residual(self, values: dict, idx, domain: str) -> tuple:
        """Unweighted residual components: (magnitude or real part, phase or imaginary)."""
        m = self.model(values, idx)
        d = self.data[idx]
        if not np.iscomplexobj(d):
            m = np.abs(m)
        if domain == "additive":
            r = m - d
            return (r.real, r.imag) if np.iscomplexobj(d) else (r.real, None)
        with np.errstate(all="ignore"):  # (a wild trial model may overflow: inf, judged so)
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
        a, b = self.raw_residual(values, idx, noise.domain)
        first, second = self.weights(noise, idx)
        parts = [a / first] if b is None else [a / first, b / second]
        out = np.concatenate(parts)
        return np.where(np.isfinite(out), out, 1e6)

    def weights(self, noise: Noise, idx) -> tuple:
        """The sigmas the residual's two parts are divided by (times each point's own
        spread, when the sweep carries one)."""
        first = noise.sigma
        second = noise.sigma if noise.domain == "additive" else noise.sigma_phase_rad
        if self.spread is None:
            return first, second
        spread = self.spread[idx]
        return first * spread, None if second is None else second * spread

    def jacobian(self, values: dict, names: list, idx, noise: Noise) -> np.ndarray:
        """d(residual_values)/d(the internal parameters ``names``), in closed form."""
        return residual_jacobian(self, values, names, idx, noise, self.weights(noise, idx))

    def lmfit_jacobian(self, params, idx, noise: Noise) -> np.ndarray:
        """:meth:`jacobian` as lmfit's ``Dfun`` calls it."""
        return self.jacobian(params.valuesdict(), varied(params), idx, noise)

    def reported(self, val: dict, known_shift=0.0) -> dict:
        """Every reported value from internal values: plain floats, or complex ones for
        the complex step that propagates the covariance (:mod:`fitkit.propagation`).
        A known value pins the scale; ``known_shift`` moves it (for its own error)."""
        f0, q = np.exp(val["lnf0"]), np.exp(val["lnq"])
        if self.known:
            ((name, (value, _)),) = self.known.items()
            scale = self.topology.scale_from_known(self.setup, name, value + known_shift, f0, q)
        else:
            scale = np.exp(val["lnscale"])
        extras = {e: np.exp(val[f"ln_{e}"]) for e in self.topology.extras}
        comps = self.topology.components(self.setup, f0, q, scale, extras)
        derived = self.topology.derived(self.setup, f0, q, comps)
        return {**comps, **derived, **self.bench.reported(val)}

    # -- parameters and identifiability --------------------------------------------------
    def start_values(self, start: Start) -> tuple:
        """Internal values at ``start``, the names left free, the undetermined directions."""
        values = {
            "lnf0": math.log(start.f0_hz),
            "lnq": math.log(min(max(start.q, 0.02), 1e6)),
            "lnscale": math.log(start.scale_ohm),
            **{f"ln_{name}": math.log(start.extras[name]) for name in self.topology.extras},
            **{PARAMETER[term]: NEUTRAL[PARAMETER[term]] for term in self.bench.terms},
            "gain": start.gain,
        }
        values = self.clipped(values)
        free = [n for n in values if n != "gain" and not (n == "lnscale" and self.known)]
        if not self.setup.is_calibrated:
            free.append("gain")
        null_dirs = self.null_directions(values, free)
        if null_dirs and "lnscale" in free:
            # the scale is what an uncalibrated sweep leaves open: hold it, keep the shape
            free.remove("lnscale")
            if self.null_directions(values, free):
                raise FitError(
                    f"the sweep cannot determine the resonance and Q of a {self.topology.label}",
                    remedy="sweep across the resonance with more points",
                    path=self.sweep.source,
                )
        return values, tuple(free), null_dirs

    def lmfit_parameters(self, values: dict, free, bounded: bool = True) -> lmfit.Parameters:
        """lmfit's Parameters for ``values``, the ``free`` ones varying (within bounds).

        One set of Parameters is kept for each list of names and reset here: building
        one costs as much as a pass of the solver, and lmfit fits a copy of it anyway."""
        key = (tuple(values), tuple(free))
        params = _TEMPLATES.get(key)
        if params is None:
            params = _TEMPLATES.setdefault(key, lmfit.Parameters())
            for name, value in values.items():
                params.add(name, value=value, vary=name in free)
        for name, value in values.items():
            low, high = self.bounds.get(name, _OPEN) if bounded else _OPEN
            params[name].set(min=low, max=high)
            params[name].set(value=value)
        return params

    def null_directions(self, values: dict, free) -> list:
        """Directions in the internal parameters that the sweep does not determine.

        Judged on about 100 points spread over the sweep: a direction the model cannot
        tell apart is as flat on them as on all (the threshold asks for exact flatness)."""
        idx = np.unique(np.linspace(0, self.sweep.points - 1, 101).astype(int))
        jac = self.jacobian(values, list(free), idx, Noise("additive", UNIT_NOISE))
        norms = np.linalg.norm(jac, axis=0)
        norms[norms == 0] = 1.0
        _, s, vt = np.linalg.svd(jac / norms, full_matrices=False)
        return [dict(zip(free, vt[i] / norms)) for i in range(len(s)) if s[i] < _SINGULAR * s[0]]

    # -- fitting passes -------------------------------------------------------------------
    def quick_minimize(self, values: dict, free, idx, noise: Noise) -> tuple:
        """Levenberg-Marquardt straight on MINPACK with the closed-form Jacobian, for
        the passes that need no covariance: the values found and the reduced chi-square."""
        names = list(free)

        def at(x):
            return {**values, **dict(zip(names, x))}

        x, _, info, _, _ = leastsq(
            lambda x: self.residual_values(at(x), idx, noise),
            [values[n] for n in names],
            Dfun=lambda x: self.jacobian(at(x), names, idx, noise),
            full_output=True,
        )
        found = self.clipped({**values, **{n: float(v) for n, v in zip(names, x)}})
        fun = info["fvec"]
        return found, float(np.sum(fun**2) / max(fun.size - len(names), 1))

    def minimize(self, first: FirstPass, noise: Noise, scale_covar: bool = True):
        """The pass on lmfit, from ``first``'s values: the covariance comes from it."""
        return self.lmfit_pass(first.values, first.free, first.used, noise, scale_covar)

    def lmfit_pass(self, values, free, idx, noise: Noise, scale_covar=True, bounded=True):
        return lmfit.minimize(
            self.residual,
            self.lmfit_parameters(values, free, bounded),
            args=(idx, noise),
            method="leastsq",
            scale_covar=scale_covar,
            Dfun=self.lmfit_jacobian,
        )

    def solve(self, values: dict, free, idx, noise: Noise) -> tuple:
        """The first solve from a start: on lmfit where its result may serve as the last
        pass (``may_keep_first``, one sigma for every residual), straight on MINPACK
        otherwise. Both run the same Levenberg-Marquardt
        from the same point (lmfit given no bounds to map)."""
        one_sigma = noise.domain == "additive" or not self.sweep.is_complex
        if not (self.may_keep_first and one_sigma):
            return (*self.quick_minimize(values, free, idx, noise), None)
        result = self.lmfit_pass(values, free, idx, noise, bounded=False)
        found = result.params.valuesdict()
        inside = all(
            self.bounds[n][0] < found[n] < self.bounds[n][1] for n in free if n in self.bounds
        )
        found = self.clipped(found)
        usable = inside and result.success and result.covar is not None
        return found, float(result.chisqr / max(result.nfree, 1)), result if usable else None

    def first_pass(self, domain: str, keep_outliers: bool) -> FirstPass:
        """Start, identifiability, a fit with unit weights, outliers out and refit."""
        start = estimate_start(self.sweep, self.setup, self.topology)
        self.check_inside(start.f0_hz, "the first estimate of the resonance")
        values, free, null_dirs = self.start_values(start)
        unit = Noise(domain, UNIT_NOISE, UNIT_NOISE)
        used = np.arange(self.sweep.points)
        values, redchi, result = self.solve(values, free, used, unit)
        if not self.f[0] <= math.exp(values["lnf0"]) <= self.f[-1] and not start.from_extremum:
            # the refinement left the sweep: try once more from the sweep's extremum and
            # keep that minimum if it stays inside (a resonance outside is refused anyway)
            second = estimate_start(self.sweep, self.setup, self.topology, from_extremum=True)
            retry, retry_redchi = self.quick_minimize(
                self.start_values(second)[0], free, used, unit
            )
            if self.f[0] <= math.exp(retry["lnf0"]) <= self.f[-1]:
                values, redchi, start, result = retry, retry_redchi, second, None
        first = FirstPass(
            values, free, redchi, used, np.array([], dtype=int), start, null_dirs, domain
        )
        first.result = result
        return first if keep_outliers else self.drop_outliers(first)

    def refine(self, first: FirstPass, values: dict, free=None, domain: str | None = None):
        """Another unit-weight pass from ``values`` on the points ``first`` kept."""
        domain = domain or first.domain
        free = first.free if free is None else tuple(free)
        found, redchi = self.quick_minimize(
            values, free, first.used, Noise(domain, UNIT_NOISE, UNIT_NOISE)
        )
        return first.moved(found, free, redchi, domain)

    def in_domain(self, first: FirstPass, domain: str) -> FirstPass:
        """``first`` refitted with residuals in another noise domain. Points it left out
        are judged again in the new one (noise in proportion to the reading makes the
        peak look wild to an even-noise fit)."""
        if not first.outliers.size:
            return self.refine(first, first.values, domain=domain)
        every = FirstPass(
            first.values,
            first.free,
            first.redchi,
            np.arange(self.sweep.points),
            first.outliers[:0],
            first.start,
            first.null_dirs,
            domain,
        )
        return self.drop_outliers(self.refine(every, first.values))

    def drop_outliers(self, first: FirstPass) -> FirstPass:
        """Points far from the first fit by a robust measure, and with little leverage,
        out; then refit. A point that steers the fit is kept whatever its residual: it is
        often the one point that shows the resonance. Steering is a hat value (Hoaglin &
        Welsch, Am. Stat. 32, 1978) above ``_STEERING``: Huber (Robust Statistics, 1981,
        from memory) counts 0.2 to 0.5 as risky and above 0.5 as a point that fixes its
        own fitted value."""
        idx, domain = first.used, first.domain
        # judged against each point's own scatter
        a, b = self.scaled_residual(first.values, idx, domain)
        flagged = np.zeros(idx.size, dtype=bool)
        size = np.zeros(idx.size)
        for comp in [a] if b is None else [a, b]:
            if not np.all(np.isfinite(comp)):  # a fit this far off calls no point wild
                continue
            spread = np.abs(comp - np.median(comp))
            mad = 1.4826 * np.median(spread)
            if mad > 0:
                dev = spread / mad
                flagged |= dev > OUTLIER_LIMIT
                size = np.maximum(size, dev)
        if not flagged.any() or flagged.sum() > _MAX_OUTLIER_SHARE * idx.size:
            return first
        steering = self.leverage(first.values, first.free, idx, domain) > _STEERING
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
        return self.refine(first, first.values)

    def leverage(self, values: dict, free, idx, domain: str) -> np.ndarray:
        """Each point's hat value (summed over its real and imaginary rows)."""
        jac = self.jacobian(values, list(free), idx, Noise(domain, UNIT_NOISE, UNIT_NOISE))
        q, _ = np.linalg.qr(jac)
        hat = np.sum(q**2, axis=1)
        return hat.reshape(-1, idx.size).sum(axis=0)

    def estimate_noise(self, first: FirstPass) -> Noise:
        """Noise from the residuals of the first pass, magnitude and phase apart (the
        level by which each point's spread is multiplied, when the sweep has one)."""
        domain = first.domain
        a, b = self.scaled_residual(first.values, first.used, domain)
        ncomp = 1 if b is None else 2
        nvary = len(first.free)
        dof_share = max(1.0 - nvary / (ncomp * first.used.size), 0.5)
        if domain == "additive" and b is not None:
            sigma = math.sqrt(np.mean(np.concatenate([a, b]) ** 2) / dof_share)
            return Noise(domain, max(sigma, 1e-300))
        sigma = math.sqrt(np.mean(a**2) / dof_share)
        phase = None if b is None else max(math.sqrt(np.mean(b**2) / dof_share), 1e-15)
        return Noise(domain, max(sigma, 1e-300), phase)

    def covariance_at(self, result, idx, noise: Noise):
        """(J^T J)^-1 from the closed-form Jacobian, when lmfit's own estimate failed (a
        minimum so sharp that its bounded-parameter transform lost precision)."""
        names = varied(result.params)
        jac = self.jacobian(result.params.valuesdict(), names, idx, noise)
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
        raise self.outside_error(side, what)

    def outside_error(self, side: str, what: str) -> FitError:
        """The error for a resonance that lies ``side`` ("above" or "below") the sweep."""
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
        return error
