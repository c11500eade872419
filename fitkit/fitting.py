"""Fit a circuit to a sweep: closed-form start, lmfit refinement, honest errors.

Internal parameters are the well-conditioned ones of :mod:`fitkit.topologies`: ln f0,
ln Q, ln of a scale resistance (and, for a coil, ln of its self-resonance) and, for an
uncalibrated sweep, a scale factor. Component values follow from them with the
covariance carried by the ``uncertainties`` package, so L and C keep their strong
correlation. Which values the sweep determines is computed, not assumed: from the
singular directions of the model's Jacobian, and from which reported value depends on a
direction the sweep leaves open.

With ``topology="auto"`` every candidate model is fitted and the one with the lowest
Bayesian information criterion (BIC) is kept, all of them judged against the same noise
level; a difference under 10 is not taken as evidence (Kass & Raftery, J. Am. Stat.
Assoc. 90, 1995: "very strong" evidence above 10, from memory).
"""

from __future__ import annotations

import hashlib
import math
from pathlib import Path

import lmfit
import numpy as np
from scipy.optimize import least_squares
from uncertainties import correlated_values, covariance_matrix, ufloat, umath

from fitkit.errors import FitError, SetupError
from fitkit.estimate import Start, estimate_start, predicted
from fitkit.fit_warnings import fit_warnings
from fitkit.noise import DB_PER_NEPER, Noise, parse_noise
from fitkit.result import (
    COMPONENTS,
    OPTIONAL,
    QUANTITIES,
    CircuitFit,
    FitStats,
    Quantity,
    nominal,
    std_dev,
)
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.topologies import TOPOLOGIES, Topology, get_topology
from fitkit.units import format_quantity

_OUTLIER_LIMIT = 6.0  # robust standard deviations
_MAX_OUTLIER_SHARE = 0.05
_SINGULAR = 1e-6  # relative singular value below which a direction is not determined
_BIC_EVIDENCE = 10.0
_UNIT_NOISE = 1.0


def fit_sweep(
    sweep: Sweep,
    setup: Setup,
    *,
    topology: str = "series",
    known: dict | None = None,
    noise: str | None = None,
    keep_outliers: bool = False,
    skin_above_hz: float | None = None,
) -> CircuitFit:
    """Fit a circuit model to a measured sweep.

    Parameters
    ----------
    sweep : Sweep
        The measured sweep.
    setup : Setup
        The bench arrangement it was taken with.
    topology : str
        ``"series"``, ``"tank"``, ``"coil"`` (see :mod:`fitkit.topologies`) or
        ``"auto"`` to fit each and keep the one the data support best.
    known : dict, optional
        Values measured otherwise, e.g. ``{"L": (100e-6, 0.5e-6)}`` (value, standard
        error) from an LCR meter; one of them pins the scale of a relative sweep.
    noise : str, optional
        A stated noise level (see :func:`fitkit.noise.parse_noise`); estimated when omitted.
    keep_outliers : bool
        Keep points far from the model instead of refitting without them.
    skin_above_hz : float, optional
        The loss grows as sqrt(f) above this frequency (skin effect).

    Returns
    -------
    CircuitFit
        Values, uncertainties, correlations, fit statistics and warnings.

    Raises
    ------
    FitError
        Too few points, a resonance outside the sweep, or a fit that does not converge.
    SetupError
        Known values that contradict each other, or an unknown topology.
    """
    known = _check_known(known or {})
    noise_model = parse_noise(noise, sweep)
    if sweep.points < 6:
        raise FitError(
            f"the sweep has only {sweep.points} points",
            remedy="sweep at least 20 points across the resonance",
            path=sweep.source,
        )
    if skin_above_hz is not None and not skin_above_hz > 0:
        raise SetupError("the skin-effect frequency must be above 0 Hz")
    if topology == "auto":
        return _choose(sweep, setup, known, noise_model, keep_outliers, skin_above_hz)
    problem = _Problem(sweep, setup, get_topology(topology), known, skin_above_hz)
    if noise_model.stated or noise_model.domain == "additive" or not sweep.is_complex:
        # one weighting for every residual: a single lmfit pass gives the covariance,
        # scaled by the noise estimated from its own residuals when none was stated
        unit = Noise(noise_model.domain, _UNIT_NOISE, _UNIT_NOISE)
        weights = noise_model if noise_model.stated else unit
        first = problem.first_pass(noise_model, keep_outliers, weights=weights, lmfit_pass=True)
        sigmas = noise_model if noise_model.stated else problem.estimate_noise(first)
        return problem.finish(first.result, first, sigmas, weights)
    first = problem.first_pass(noise_model, keep_outliers)
    sigmas = problem.estimate_noise(first)
    return problem.final(first, sigmas)


def _choose(sweep, setup, known, noise_model, keep_outliers, skin) -> CircuitFit:
    """Fit every candidate, judge them by BIC against one noise level, keep the best."""
    trials, failed = {}, {}
    for name, topology in TOPOLOGIES.items():
        problem = _Problem(sweep, setup, topology, known, skin)
        problem.forced = False  # the model is being chosen, not imposed
        try:
            trials[name] = (problem, problem.first_pass(noise_model, keep_outliers))
        except FitError as exc:
            failed[name] = exc.message
        except (ArithmeticError, ValueError, np.linalg.LinAlgError) as exc:
            failed[name] = f"numerical failure: {exc}"
    if not trials:
        reasons = "; ".join(f"{n}: {m}" for n, m in failed.items())
        raise FitError(
            f"no circuit model fits this sweep ({reasons})",
            remedy="check the setup values and that the sweep covers the resonance",
            path=sweep.source,
        )
    best = min(trials, key=lambda n: trials[n][1].redchi)
    sigmas = noise_model if noise_model.stated else trials[best][0].estimate_noise(trials[best][1])
    common = np.arange(sweep.points)
    for _, first in trials.values():
        common = np.intersect1d(common, first.used)
    bic = {}
    for name, (problem, first) in trials.items():
        resid = problem.residual(first.params, common, sigmas)
        k = len(_varied(first.params))
        bic[name] = float(np.sum(resid**2) + k * math.log(resid.size))
    ranked = sorted(bic, key=bic.get)
    winner = ranked[0]
    close = [n for n in ranked[1:] if bic[n] - bic[winner] < _BIC_EVIDENCE]
    if close:
        simplest = min([winner, *close], key=lambda n: len(TOPOLOGIES[n].extras))
        text = (
            f"cannot tell {' from '.join([winner, *close])} apart (BIC within "
            f"{_BIC_EVIDENCE:g}); reporting the simpler {simplest}"
        )
        winner = simplest
    else:
        margins = ", ".join(f"{bic[n] - bic[winner]:.0f} below {n}" for n in ranked[1:])
        text = f"chose {winner}: BIC {margins}" if margins else f"chose {winner}"
    if failed:
        text += "; " + "; ".join(f"{n} did not fit ({m})" for n, m in failed.items())
    problem, first = trials[winner]
    fit = problem.final(first, sigmas)
    fit.choice = text
    return fit


def _varied(params: lmfit.Parameters) -> list:
    return [name for name, p in params.items() if p.vary]


def _check_known(known: dict) -> dict:
    out = {}
    for name, value in known.items():
        if name not in COMPONENTS:
            raise SetupError(
                f"cannot take a known value for {name!r}",
                remedy="give a known R, L or C, e.g. L=100u",
            )
        v, s = value if isinstance(value, tuple) else (value, 0.0)
        if not (v > 0 and math.isfinite(v)):
            raise SetupError(f"the known {name} must be above zero, not {v!r}")
        out[name] = (float(v), float(s or 0.0))
    if len(out) > 1:
        raise SetupError(
            f"{len(out)} known values given ({', '.join(out)}); one pins the circuit",
            remedy="give only the one you trust most",
        )
    return out


class _FirstPass:
    """A fit with unit weights on the points kept, and what it found on the way."""

    def __init__(self, params, redchi, used, outliers, start: Start, null_dirs, domain, result):
        self.params, self.redchi, self.used, self.outliers = params, redchi, used, outliers
        self.start, self.null_dirs, self.domain = start, null_dirs, domain
        self.result = result  # the lmfit result, when the pass ran on lmfit


class _Problem:
    """One sweep, one setup, one topology, the known values: model and residuals."""

    def __init__(self, sweep: Sweep, setup: Setup, topology: Topology, known: dict, skin):
        self.sweep, self.setup, self.topology = sweep, setup, topology
        self.known, self.skin = known, skin
        self.forced = True  # the user named the model (not chosen among candidates)
        self.f = sweep.freq_hz
        self.data = sweep.values
        self.coefficients = setup.coefficients(self.f)
        # generous bounds keep a wandering candidate model finite; a fit that ends on
        # one is reported (values at a bound are not trusted)
        lo, hi = math.log(self.f[0]), math.log(self.f[-1])
        self.bounds = {"lnf0": (lo - 3.0, hi + 3.0), "lnq": (-5.0, 16.0), "lnscale": (-14.0, 28.0)}
        self.bounds.update({f"ln_{e}": (lo - 5.0, hi + 7.0) for e in topology.extras})

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
        return f0, q, scale, extras, values["gain"]

    def model(self, values: dict, idx=slice(None)) -> np.ndarray:
        f0, q, scale, extras, gain = self.state(values)
        if isinstance(idx, slice) or idx.size == self.f.size:
            coefficients = self.coefficients  # every point: no copy
        else:
            coefficients = tuple(c[idx] for c in self.coefficients)
        return predicted(
            self.setup,
            self.f[idx],
            f0,
            q,
            scale,
            topology=self.topology,
            extras=extras,
            gain=gain,
            skin_above_hz=self.skin,
            coefficients=coefficients,
        )

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

    def residual(self, params, idx, noise: Noise) -> np.ndarray:
        return self.residual_values(params.valuesdict(), idx, noise)

    def residual_values(self, values: dict, idx, noise: Noise) -> np.ndarray:
        a, b = self.raw_residual(values, idx, noise.domain)
        parts = [a / noise.sigma]
        if b is not None:
            phase_sigma = noise.sigma if noise.domain == "additive" else noise.sigma_phase_rad
            parts.append(b / phase_sigma)
        out = np.concatenate(parts)
        return np.where(np.isfinite(out), out, 1e6)

    # -- parameters and identifiability --------------------------------------------------
    def parameters(self, start: Start) -> tuple:
        # generous bounds keep a wandering candidate model finite; a fit that ends on
        # one is reported (values at a bound are not trusted)
        params = lmfit.Parameters()
        params.add("lnf0", value=math.log(start.f0_hz))
        params.add("lnq", value=math.log(min(max(start.q, 0.02), 1e6)))
        params.add("lnscale", value=math.log(start.scale_ohm), vary=not self.known)
        for name in self.topology.extras:
            params.add(f"ln_{name}", value=math.log(start.extras[name]))
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

    def null_directions(self, params: lmfit.Parameters) -> list:
        """Directions in the internal parameters that the sweep does not determine."""
        names = _varied(params)
        base = params.valuesdict()
        idx = np.arange(self.sweep.points)
        noise = Noise("additive", _UNIT_NOISE)
        r0 = self.residual_values(base, idx, noise)
        cols = []
        for name in names:
            step = 1e-6 * max(1.0, abs(base[name]))
            shifted = {**base, name: base[name] + step}
            cols.append((self.residual_values(shifted, idx, noise) - r0) / step)
        jac = np.column_stack(cols)
        norms = np.linalg.norm(jac, axis=0)
        norms[norms == 0] = 1.0
        _, s, vt = np.linalg.svd(jac / norms, full_matrices=False)
        return [dict(zip(names, vt[i] / norms)) for i in range(len(s)) if s[i] < _SINGULAR * s[0]]

    # -- fitting passes -------------------------------------------------------------------
    def quick_minimize(self, params, idx, noise: Noise) -> tuple:
        """Levenberg-Marquardt straight on scipy, for the passes that need no covariance;
        the parameters are updated in place."""
        names = _varied(params)
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

    def first_pass(
        self,
        noise_model: Noise,
        keep_outliers: bool,
        *,
        weights: Noise | None = None,
        lmfit_pass: bool = False,
    ) -> _FirstPass:
        """Start, identifiability, a fit (unit weights unless given), outliers out and
        refit. With ``lmfit_pass`` the fits run on lmfit and the last result is kept."""
        start = estimate_start(self.sweep, self.setup, self.topology, self.skin)
        self.check_inside(start.f0_hz, "the first estimate of the resonance")
        params, null_dirs = self.parameters(start)
        unit = weights or Noise(noise_model.domain, _UNIT_NOISE, _UNIT_NOISE)
        used = np.arange(self.sweep.points)
        result = None

        def run(p, idx):
            nonlocal result
            if not lmfit_pass:
                return self.quick_minimize(p, idx, unit)
            result = self.minimize(p, idx, unit, scale_covar=not unit.stated)
            return result.params, float(result.redchi)

        params, redchi = run(params, used)
        if not self.f[0] <= math.exp(params["lnf0"].value) <= self.f[-1]:
            # the refinement left the sweep: try once more from the sweep's extremum and
            # keep that minimum if it stays inside (a resonance outside is refused anyway)
            second = estimate_start(
                self.sweep, self.setup, self.topology, self.skin, from_extremum=True
            )
            kept = result
            retry, retry_redchi = run(self.parameters(second)[0], used)
            if self.f[0] <= math.exp(retry["lnf0"].value) <= self.f[-1]:
                params, redchi, start = retry, retry_redchi, second
            else:
                result = kept
        outliers = np.array([], dtype=int)
        if not keep_outliers:
            outliers = self.outliers(params, used, noise_model.domain)
            if outliers.size:
                used = np.setdiff1d(used, outliers)
                params, redchi = run(params, used)
        return _FirstPass(
            params, redchi, used, outliers, start, null_dirs, noise_model.domain, result
        )

    def outliers(self, params, idx, domain: str) -> np.ndarray:
        """Points far from a first fit by a robust measure, unless too many are."""
        a, b = self.raw_residual(params.valuesdict(), idx, domain)
        flagged = np.zeros(idx.size, dtype=bool)
        for comp in [a] if b is None else [a, b]:
            mad = 1.4826 * np.median(np.abs(comp - np.median(comp)))
            if mad > 0:
                flagged |= np.abs(comp - np.median(comp)) > _OUTLIER_LIMIT * mad
        if flagged.sum() > _MAX_OUTLIER_SHARE * idx.size:
            return np.array([], dtype=int)
        return idx[flagged]

    def estimate_noise(self, first: _FirstPass) -> Noise:
        """Noise from the residuals of the first pass, magnitude and phase apart."""
        domain = first.domain
        a, b = self.raw_residual(first.params.valuesdict(), first.used, domain)
        ncomp = 1 if b is None else 2
        nvary = len(_varied(first.params))
        dof_share = max(1.0 - nvary / (ncomp * first.used.size), 0.5)
        if domain == "additive" and b is not None:
            sigma = math.sqrt(np.mean(np.concatenate([a, b]) ** 2) / dof_share)
            return Noise(domain, max(sigma, 1e-300))
        sigma = math.sqrt(np.mean(a**2) / dof_share)
        phase = None if b is None else max(math.sqrt(np.mean(b**2) / dof_share), 1e-15)
        return Noise(domain, max(sigma, 1e-300), phase)

    def final(self, first: _FirstPass, noise: Noise) -> CircuitFit:
        """The last pass, weighted by the noise, and the result."""
        result = self.minimize(first.params, first.used, noise, scale_covar=not noise.stated)
        return self.finish(result, first, noise, noise)

    def finish(self, result, first: _FirstPass, noise: Noise, weights: Noise) -> CircuitFit:
        """The result of the lmfit pass that ran with ``weights``, judged by ``noise``."""
        if result.success and result.covar is None:
            result.covar = self.covariance_at(result, first.used, weights)
            result.errorbars = result.covar is not None
        if not result.success or result.covar is None:
            raise FitError(
                f"the fit did not converge ({result.message})",
                remedy="check the setup values and that the sweep covers the resonance",
                path=self.sweep.source,
            )
        return self.to_result(result, first, noise, (weights.sigma / noise.sigma) ** 2)

    def covariance_at(self, result, idx, noise: Noise):
        """(J^T J)^-1 from central differences, when lmfit's own estimate failed (a
        minimum so sharp that its forward-difference Jacobian lost precision)."""
        names = _varied(result.params)
        base = result.params.valuesdict()
        cols = []
        for name in names:
            step = 1e-5 * max(1.0, abs(base[name]))
            up = self.residual_values({**base, name: base[name] + step}, idx, noise)
            down = self.residual_values({**base, name: base[name] - step}, idx, noise)
            cols.append((up - down) / (2.0 * step))
        jac = np.column_stack(cols)
        try:
            cov = np.linalg.inv(jac.T @ jac)
        except np.linalg.LinAlgError:
            return None
        if not (np.all(np.isfinite(cov)) and np.all(np.diag(cov) > 0)):
            return None
        return cov * (result.redchi if not noise.stated else 1.0)

    # -- checks and the result ------------------------------------------------------------
    def check_inside(self, f0: float, what: str) -> None:
        if not (self.f[0] <= f0 <= self.f[-1]):
            raise FitError(
                f"{what} lies at {format_quantity(f0, 'Hz')}, outside the sweep "
                f"({format_quantity(self.f[0], 'Hz')} to {format_quantity(self.f[-1], 'Hz')})",
                remedy="sweep again across the resonance (a few bandwidths each side)"
                + (
                    "; if the sweep does cover it, the circuit model may be wrong: try --model auto"
                    if self.forced
                    else "; check the setup values (a wrong bench makes any model miss)"
                ),
                path=self.sweep.source,
            )

    def to_result(self, result, first: _FirstPass, noise: Noise, chi_scale: float) -> CircuitFit:
        """The CircuitFit; ``chi_scale`` turns the pass's chi-square into one against
        ``noise`` (the pass may have run with unit weights)."""
        quantities, undetermined, uvalues = self.quantities(result, first.null_dirs)
        self.check_inside(quantities["f0_hz"].value, "the fitted resonance")
        used = first.used
        a, b = self.raw_residual(result.params.valuesdict(), used, noise.domain)
        if noise.domain == "relative":
            rms, rms_unit = float(np.sqrt(np.mean(a**2)) * DB_PER_NEPER), "dB"
        else:
            mag = np.abs(a + 1j * b) if b is not None else np.abs(a)
            rms = float(np.sqrt(np.mean(mag**2)))
            rms_unit = {"volts": "V", "impedance": "ohm"}.get(self.sweep.kind, "")
        chi2 = float(result.chisqr) * chi_scale
        n, k = int(result.ndata), int(result.nvarys)
        redchi = chi2 / max(result.nfree, 1)
        stats = FitStats(
            points=self.sweep.points,
            used_points=int(used.size),
            redchi=redchi,
            rms=rms,
            rms_unit=rms_unit,
            # as lmfit defines them, from the chi-square against the noise
            aic=n * math.log(chi2 / n) + 2 * k,
            bic=n * math.log(chi2 / n) + k * math.log(n),
            converged=bool(result.success and result.errorbars),
            noise=noise.describe(self.sweep.kind),
            start=first.start.method,
            outliers_hz=[float(x) for x in self.f[first.outliers]],
            warnings=fit_warnings(self, result, redchi, quantities, first.start, noise, used),
        )
        determined = [n for n in quantities if quantities[n].determined]
        fit = CircuitFit(
            topology=self.topology.name,
            quantities=quantities,
            covariance_names=determined,
            covariance=np.array(covariance_matrix([uvalues[n] for n in determined])),
            stats=stats,
            setup=self.setup.to_dict(),
            sweep=self.sweep_info(),
            known={k: {"value": v, "stderr": s} for k, (v, s) in self.known.items()},
            undetermined=undetermined,
        )
        fit.model_curve = (self.f, self.data, self.model(result.params.valuesdict()))
        return fit

    def quantities(self, result, null_dirs) -> tuple:
        names = _varied(result.params)
        uv = dict(
            zip(names, correlated_values([result.params[n].value for n in names], result.covar))
        )
        val = {n: uv.get(n, p.value) for n, p in result.params.items()}
        f0 = umath.exp(val["lnf0"])
        q = umath.exp(val["lnq"])
        scale_open = bool(null_dirs) and not self.known
        marker = None
        if self.known:
            ((name, (value, stderr)),) = self.known.items()
            exact_or_uncertain = ufloat(value, stderr) if stderr else value
            scale = self.topology.scale_from_known(self.setup, name, exact_or_uncertain, f0, q)
        elif scale_open:
            marker = ufloat(math.exp(val["lnscale"]), 1.0, tag="scale left open")
            scale = marker
        else:
            scale = umath.exp(val["lnscale"])
        extras = {e: umath.exp(val[f"ln_{e}"]) for e in self.topology.extras}
        comps = self.topology.components(self.setup, f0, q, scale, extras)
        values = {**comps, **self.topology.derived(self.setup, f0, q, comps)}
        quantities, undetermined, kept = {}, [], {}
        for name in QUANTITIES:
            if name in OPTIONAL and name not in values:
                continue
            u = values.get(name)
            depends_on_open = marker is not None and u is not None and _derivative(u, marker) != 0.0
            if u is None or depends_on_open:
                reason, remedy = self.why_undetermined(depends_on_open or scale_open)
                quantities[name] = Quantity(name, None, None, reason)
                undetermined.append({"name": name, "reason": reason, "remedy": remedy})
                continue
            kept[name] = u
            quantities[name] = Quantity(name, nominal(u), std_dev(u))
        return quantities, undetermined, kept

    def why_undetermined(self, scale_open: bool) -> tuple:
        if scale_open:
            return (
                "an uncalibrated sweep fixes only f0 and the Q it shows; nothing ties its "
                "scale to ohms",
                "give the generator amplitude or a calibrated ratio with the sense resistor, "
                "or one known value (e.g. --known L=100u from an LCR meter)",
            )
        return (
            "the circuit loss R is not resolved above zero, so Q and the circuit's own "
            "bandwidth are unbounded",
            "check the fixture resistances in the setup, or measure with less resistance "
            "in the loop (a smaller sense resistor, an impedance analyser)",
        )

    def sweep_info(self) -> dict:
        info = {
            "source": self.sweep.source,
            "points": self.sweep.points,
            "f_min_hz": float(self.f[0]),
            "f_max_hz": float(self.f[-1]),
            "kind": self.sweep.kind,
            "complex": self.sweep.is_complex,
            "recorded_in_db": self.sweep.recorded_in_db,
            "notes": list(self.sweep.notes),
            "metadata": {str(k): str(v) for k, v in self.sweep.metadata.items()},
            "skin_above_hz": self.skin,
        }
        path = Path(self.sweep.source)
        if path.is_file():
            info["sha256"] = hashlib.sha256(path.read_bytes()).hexdigest()
        return info


def _derivative(u, variable) -> float:
    return getattr(u, "derivatives", {}).get(variable, 0.0)
