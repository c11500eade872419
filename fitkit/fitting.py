"""Fit a series R-L-C to a sweep: closed-form start, lmfit refinement, honest errors.

Internal parameters are the well-conditioned ones: ln f0, ln(loaded Q), ln(loop
resistance) and, for an uncalibrated sweep, a scale factor. R, L and C follow from them
(``L = QL Rloop / w0``, ``C = 1 / (w0 QL Rloop)``, ``R = Rloop - Rfixture``) with the
covariance carried by the ``uncertainties`` package, so L and C keep their strong
correlation. Which values the sweep determines is computed from the model's Jacobian,
not assumed.
"""

from __future__ import annotations

import hashlib
import math
from pathlib import Path

import lmfit
import numpy as np
from uncertainties import correlated_values, covariance_matrix, ufloat, umath

from fitkit.circuits import TWO_PI
from fitkit.errors import FitError, SetupError
from fitkit.estimate import Start, estimate_start, predicted
from fitkit.noise import DB_PER_NEPER, Noise, parse_noise
from fitkit.result import COMPONENTS, QUANTITIES, CircuitFit, FitStats, Quantity
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.units import format_quantity

_OUTLIER_LIMIT = 6.0  # robust standard deviations
_MAX_OUTLIER_SHARE = 0.05
_MIN_POINTS_IN_BAND = 5
_SINGULAR = 1e-6  # relative singular value below which a direction is not determined


def fit_sweep(
    sweep: Sweep,
    setup: Setup,
    *,
    known: dict | None = None,
    noise: str | None = None,
    keep_outliers: bool = False,
) -> CircuitFit:
    """Fit a series R-L-C circuit to a measured sweep.

    Parameters
    ----------
    sweep : Sweep
        The measured sweep.
    setup : Setup
        The bench arrangement it was taken with.
    known : dict, optional
        Values measured otherwise, e.g. ``{"L": (100e-6, 0.5e-6)}`` (value, standard
        error) from an LCR meter; one of them pins the scale of a relative sweep.
    noise : str, optional
        A stated noise level (see :func:`fitkit.noise.parse_noise`); estimated when omitted.
    keep_outliers : bool
        Keep points far from the model instead of refitting without them.

    Returns
    -------
    CircuitFit
        Values, uncertainties, correlations, fit statistics and warnings.

    Raises
    ------
    FitError
        Too few points, a resonance outside the sweep, or a fit that does not converge.
    SetupError
        Known values that contradict each other or the setup.
    """
    problem = _Problem(sweep, setup, _check_known(known or {}))
    noise_model = parse_noise(noise, sweep)
    if sweep.points < 6:
        raise FitError(
            f"the sweep has only {sweep.points} points",
            remedy="sweep at least 20 points across the resonance",
            path=sweep.source,
        )
    start = estimate_start(sweep, setup)
    problem.check_inside(start.f0_hz, "the first estimate of the resonance")
    params, null_dirs = problem.parameters(start)
    used = np.arange(sweep.points)

    first = problem.minimize(params, used, Noise(noise_model.domain, 1.0, 1.0))
    outliers = np.array([], dtype=int)
    if not keep_outliers:
        outliers = problem.outliers(first.params, used, noise_model.domain)
        if outliers.size:
            used = np.setdiff1d(used, outliers)
            first = problem.minimize(first.params, used, Noise(noise_model.domain, 1.0, 1.0))
    if noise_model.stated:
        sigmas = noise_model
    else:
        nvary = len(params_varied(params))
        sigmas = problem.estimate_noise(first.params, used, noise_model.domain, nvary)
    result = problem.minimize(first.params, used, sigmas, scale_covar=not noise_model.stated)
    if not result.success or result.covar is None:
        raise FitError(
            f"the fit did not converge ({result.message})",
            remedy="check the setup values and that the sweep covers the resonance",
            path=sweep.source,
        )
    return problem.to_result(result, start, sigmas, used, outliers, null_dirs)


def params_varied(params: lmfit.Parameters) -> list:
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


class _Problem:
    """One sweep, one setup, the known values: the model and its residuals."""

    def __init__(self, sweep: Sweep, setup: Setup, known: dict) -> None:
        self.sweep = sweep
        self.setup = setup
        self.known = known
        self.f = sweep.freq_hz
        self.data = sweep.values

    # -- the model in internal parameters -------------------------------------------------
    def loop_from_known(self, f0, ql, w0=None):
        """Loop resistance implied by the known value (plain or uncertain numbers)."""
        w0 = TWO_PI * f0 if w0 is None else w0
        ((name, (value, stderr)),) = self.known.items()
        v = ufloat(value, stderr) if not isinstance(f0, float) else value
        if name == "L":
            return w0 * v / ql
        if name == "C":
            return 1.0 / (w0 * ql * v)
        return v + self.setup.external_ohm

    def state(self, values: dict) -> tuple:
        f0 = math.exp(values["lnf0"])
        ql = math.exp(values["lnql"])
        loop = self.loop_from_known(f0, ql) if self.known else math.exp(values["lnloop"])
        return f0, ql, loop, values["gain"]

    def model(self, values: dict, idx=slice(None)) -> np.ndarray:
        f0, ql, loop, gain = self.state(values)
        return predicted(self.setup, self.f[idx], f0, ql, loop, gain)

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
        a, b = self.raw_residual(params.valuesdict(), idx, noise.domain)
        parts = [a / noise.sigma]
        if b is not None:
            phase_sigma = noise.sigma if noise.domain == "additive" else noise.sigma_phase_rad
            parts.append(b / phase_sigma)
        out = np.concatenate(parts)
        return np.where(np.isfinite(out), out, 1e6)

    # -- parameters and identifiability --------------------------------------------------
    def parameters(self, start: Start) -> tuple:
        params = lmfit.Parameters()
        params.add("lnf0", value=math.log(start.f0_hz))
        params.add("lnql", value=math.log(max(start.q_loaded, 1e-3)))
        params.add("lnloop", value=math.log(start.loop_ohm), vary=not self.known)
        params.add("gain", value=start.gain, vary=not self.setup.is_calibrated)
        null_dirs = self.null_directions(params)
        if null_dirs:
            # the scale is what a relative sweep leaves open: hold it, keep the shape
            params["lnloop"].vary = False
            if self.null_directions(params):
                raise FitError(
                    "the sweep cannot determine the resonance and Q of this circuit",
                    remedy="sweep across the resonance with more points",
                    path=self.sweep.source,
                )
        return params, null_dirs

    def jacobian(self, params: lmfit.Parameters, names: list) -> np.ndarray:
        base = params.valuesdict()
        idx = np.arange(self.sweep.points)
        noise = Noise("additive", 1.0)
        r0 = self.residual(params, idx, noise)
        cols = []
        for name in names:
            p2 = params.copy()
            step = 1e-6 * max(1.0, abs(base[name]))
            p2[name].set(value=base[name] + step)
            cols.append((self.residual(p2, idx, noise) - r0) / step)
        return np.column_stack(cols)

    def null_directions(self, params: lmfit.Parameters) -> list:
        """Directions in the internal parameters that the sweep does not determine."""
        names = params_varied(params)
        jac = self.jacobian(params, names)
        norms = np.linalg.norm(jac, axis=0)
        norms[norms == 0] = 1.0
        _, s, vt = np.linalg.svd(jac / norms, full_matrices=False)
        return [dict(zip(names, vt[i] / norms)) for i in range(len(s)) if s[i] < _SINGULAR * s[0]]

    # -- fitting passes -------------------------------------------------------------------
    def minimize(self, params, idx, noise: Noise, scale_covar: bool = True):
        return lmfit.minimize(
            self.residual, params, args=(idx, noise), method="leastsq", scale_covar=scale_covar
        )

    def outliers(self, params, idx, domain: str) -> np.ndarray:
        """Points far from a first fit by a robust measure, unless too many are."""
        a, b = self.raw_residual(params.valuesdict(), idx, domain)
        comps = [a] if b is None else [a, b]
        flagged = np.zeros(idx.size, dtype=bool)
        for comp in comps:
            mad = 1.4826 * np.median(np.abs(comp - np.median(comp)))
            if mad > 0:
                flagged |= np.abs(comp - np.median(comp)) > _OUTLIER_LIMIT * mad
        if flagged.sum() > _MAX_OUTLIER_SHARE * idx.size:
            return np.array([], dtype=int)
        return idx[flagged]

    def estimate_noise(self, params, idx, domain: str, nvary: int) -> Noise:
        a, b = self.raw_residual(params.valuesdict(), idx, domain)
        ncomp = 1 if b is None else 2
        dof_share = max(1.0 - nvary / (ncomp * idx.size), 0.5)
        if domain == "additive" and b is not None:
            sigma = math.sqrt(np.mean(np.concatenate([a, b]) ** 2) / dof_share)
            return Noise(domain, max(sigma, 1e-300))
        sigma = math.sqrt(np.mean(a**2) / dof_share)
        phase = None if b is None else max(math.sqrt(np.mean(b**2) / dof_share), 1e-15)
        return Noise(domain, max(sigma, 1e-300), phase)

    # -- checks and the result ------------------------------------------------------------
    def check_inside(self, f0: float, what: str) -> None:
        if not (self.f[0] <= f0 <= self.f[-1]):
            raise FitError(
                f"{what} lies at {format_quantity(f0, 'Hz')}, outside the sweep "
                f"({format_quantity(self.f[0], 'Hz')} to {format_quantity(self.f[-1], 'Hz')})",
                remedy="sweep again across the resonance (a few bandwidths each side)",
                path=self.sweep.source,
            )

    def to_result(
        self, result, start: Start, noise: Noise, used, outliers, null_dirs
    ) -> CircuitFit:
        quantities, undetermined = self.quantities(result, null_dirs)
        self.check_inside(quantities["f0_hz"].value, "the fitted resonance")
        warnings = self.warnings(result, quantities, start, noise, used)
        determined = [n for n in QUANTITIES if quantities[n].determined]
        a, b = self.raw_residual(result.params.valuesdict(), used, noise.domain)
        if noise.domain == "relative":
            rms, rms_unit = float(np.sqrt(np.mean(a**2)) * DB_PER_NEPER), "dB"
        else:
            mag = np.abs(a + 1j * b) if b is not None else np.abs(a)
            rms = float(np.sqrt(np.mean(mag**2)))
            rms_unit = {"volts": "V", "impedance": "ohm"}.get(self.sweep.kind, "")
        stats = FitStats(
            points=self.sweep.points,
            used_points=int(used.size),
            redchi=float(result.redchi),
            rms=rms,
            rms_unit=rms_unit,
            aic=float(result.aic),
            bic=float(result.bic),
            converged=bool(result.success and result.errorbars),
            noise=noise.describe(self.sweep.kind),
            start=start.method,
            outliers_hz=[float(x) for x in self.f[outliers]],
            warnings=warnings,
        )
        values = [self._uvalues[n] for n in determined]
        fit = CircuitFit(
            topology="series",
            quantities=quantities,
            covariance_names=determined,
            covariance=np.array(covariance_matrix(values)),
            stats=stats,
            setup=self.setup.to_dict(),
            sweep=self.sweep_info(),
            known={k: {"value": v, "stderr": s} for k, (v, s) in self.known.items()},
            undetermined=undetermined,
        )
        fit.model_curve = (self.f, self.data, self.model(result.params.valuesdict()))
        return fit

    def quantities(self, result, null_dirs) -> tuple:
        names = params_varied(result.params)
        uv = dict(zip(names, _correlated(result, names)))
        val = {n: uv.get(n, result.params[n].value) for n in ("lnf0", "lnql", "lnloop")}
        f0 = umath.exp(val["lnf0"])
        ql = umath.exp(val["lnql"])
        w0 = TWO_PI * f0
        out = {"f0_hz": f0, "Q_loaded": ql, "loaded_bandwidth_hz": f0 / ql}
        scale_known = bool(self.known) or not null_dirs
        if scale_known:
            loop = self.loop_from_known(f0, ql, w0) if self.known else umath.exp(val["lnloop"])
            r = loop - self.setup.external_ohm
            out["R"] = r
            out["L"] = ql * loop / w0
            out["C"] = 1.0 / (w0 * ql * loop)
            if _value(r) > 0:
                out["Q"] = w0 * out["L"] / r
                out["bandwidth_hz"] = r / (TWO_PI * out["L"])
        self._uvalues = out
        quantities, undetermined = {}, []
        for name in QUANTITIES:
            if name in out:
                u = out[name]
                quantities[name] = Quantity(name, float(_value(u)), float(_stderr(u)))
                continue
            reason, remedy = self.why_undetermined(name, scale_known)
            quantities[name] = Quantity(name, None, None, reason)
            undetermined.append({"name": name, "reason": reason, "remedy": remedy})
        return quantities, undetermined

    def why_undetermined(self, name: str, scale_known: bool) -> tuple:
        if not scale_known:
            return (
                "an uncalibrated sweep fixes only f0 and the loaded Q; nothing ties its "
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

    def warnings(self, result, q: dict, start: Start, noise: Noise, used) -> list:
        out = []
        f0, ql = q["f0_hz"].value, q["Q_loaded"].value
        half = f0 / (2.0 * ql)
        inside = int(np.sum(np.abs(self.f[used] - f0) <= half))
        if inside < _MIN_POINTS_IN_BAND:
            out.append(
                f"only {inside} points lie within the half-power band "
                f"({format_quantity(f0 - half, 'Hz')} to {format_quantity(f0 + half, 'Hz')}); "
                "sweep finer near the resonance"
            )
        if q["R"].determined and q["R"].value <= 0:
            out.append(
                f"R came out at {q['R'].text()}: the fixture resistance in the setup "
                f"({format_quantity(self.setup.external_ohm, 'ohm')}) is at least the whole "
                "loop resistance found; check the sense and source resistance values"
            )
        elif q["R"].determined and q["R"].value < 2.0 * q["R"].stderr:
            out.append(
                f"R = {q['R'].text()} is barely resolved above zero: the fixture "
                f"resistance ({format_quantity(self.setup.external_ohm, 'ohm')}) dominates the loop"
            )
        if start.mirror_loop_ohm is not None and not self.sweep.is_complex:
            other = start.mirror_loop_ohm - self.setup.external_ohm
            out.append(
                f"a magnitude-only {self.sweep.kind} sweep fits "
                f"R = {format_quantity(other, 'ohm')} "
                "about as well as the value reported; measure the phase too to tell them apart"
            )
        z = self.residual(result.params, used, noise)[: used.size]
        if used.size >= 20:
            lag1 = float(np.corrcoef(z[:-1], z[1:])[0, 1])
            if lag1 > 0.5:
                out.append(
                    f"the residuals are structured (lag-1 correlation {lag1:.2f}): the series "
                    "R-L-C model does not describe this sweep well and the uncertainties are "
                    "too small; look at the plot"
                )
        if noise.stated:
            dof = max(result.nfree, 1)
            if result.redchi > 1.0 + 4.0 * math.sqrt(2.0 / dof):
                out.append(
                    f"reduced chi-square {result.redchi:.2f} with the stated noise: the noise "
                    "is larger than stated or the model does not fit"
                )
            elif result.redchi < 1.0 - 4.0 * math.sqrt(2.0 / dof):
                out.append(
                    f"reduced chi-square {result.redchi:.2f}: the stated noise is larger than "
                    "the scatter seen; the uncertainties are pessimistic"
                )
        return out

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
        }
        path = Path(self.sweep.source)
        if path.is_file():
            info["sha256"] = hashlib.sha256(path.read_bytes()).hexdigest()
        return info


def _correlated(result, names):
    return correlated_values([result.params[n].value for n in names], result.covar)


def _value(u) -> float:
    return getattr(u, "nominal_value", u)


def _stderr(u) -> float:
    return getattr(u, "std_dev", 0.0)
