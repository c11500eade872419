"""Warnings on a finished fit: what a user must look at before trusting its numbers.

Each warning comes with the values it undermines (``"all"``, a tuple of quantity names,
or ``None`` for advice that leaves the values sound); :mod:`fitkit.fitting` marks those
values doubtful with the warning as the reason. The checks: too few points across the
resonance, a resonance near an end of the sweep, a loss not resolved above zero, a fit
that ended at a limit of its search range, a magnitude-only ambiguity, a model that
does not describe the sweep (:mod:`fitkit.adequacy`, judged without trusting the noise
level), the scatter following the reading, and a reduced chi-square
that contradicts a stated noise. A poor fit is state on the result, not an exception:
the command decides what to do.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.stats import chi2

from fitkit.adequacy import check_circle, check_structure
from fitkit.estimate import dip_contrast
from fitkit.probe_reading import probe_reading
from fitkit.units import format_quantity

MIN_POINTS_IN_BAND = 5
#: what a sparse band or an open band edge undermines: the width and what follows from it
_WIDTH = ("R", "Q", "Q_loaded", "bandwidth", "loaded_bandwidth", "R_dynamic", "R_dc")
_WIDTH += ("k_skin", "R_self")


def fit_warnings(problem, result, redchi: float, q: dict, first, noise) -> list:
    """``(text, affected)`` pairs for a finished fit (see the module notes)."""
    used = first.used
    out = _band_warnings(problem, q, used, result.params.valuesdict())
    r = q["R"]
    ext = format_quantity(problem.setup.external_ohm, "ohm")
    if r.determined and r.value <= 0:
        out.append(
            (
                f"R came out at {r.text()}: the fixture resistance in the setup ({ext}) is at "
                "least the whole loop resistance found; check the sense and source resistance",
                ("R", "Q", "bandwidth"),
            )
        )
    elif r.determined and r.value < 2.0 * r.stderr:
        out.append(
            (
                f"R = {r.text()} is barely resolved above zero: the fixture resistance "
                f"({ext}) dominates the loop",
                None,
            )
        )
    at_limit = [
        name
        for name, p in result.params.items()
        if p.vary
        and name in problem.bounds
        and min(abs(p.value - edge) for edge in problem.bounds[name]) < 1e-6
    ]
    if at_limit:
        out.append(
            (
                "the fit ended at a limit of its search range (" + ", ".join(at_limit) + "): "
                "the values are not to be trusted; check the setup and the circuit model",
                "all",
            )
        )
    if first.start.mirror_scale_ohm is not None and not problem.sweep.is_complex:
        other = first.start.mirror_scale_ohm - problem.setup.external_ohm
        out.append(
            (
                f"a magnitude-only {problem.sweep.kind} sweep fits R = "
                f"{format_quantity(other, 'ohm')} about as well as the value reported; "
                "measure the phase too to tell them apart",
                ("R", "Q", "bandwidth", "L", "C"),
            )
        )
    out.extend(probe_reading(problem, first, result.params.valuesdict(), q))
    out.extend(_adequacy(problem, result, noise, used))
    domain_hint = _noise_domain_hint(problem, result, noise, used)
    if domain_hint:
        out.append((domain_hint, "all"))
    if noise.per_point is not None:
        out.extend(_per_point_chi_square(redchi, result.nfree))
    elif noise.stated:
        dof = max(result.nfree, 1)
        if redchi > 1.0 + 4.0 * math.sqrt(2.0 / dof):
            out.append(
                (
                    f"reduced chi-square {redchi:.2f} with the stated noise: the noise "
                    "is larger than stated or the model does not fit",
                    "all",
                )
            )
        elif redchi < 1.0 - 4.0 * math.sqrt(2.0 / dof):
            out.append(
                (
                    f"reduced chi-square {redchi:.2f}: the stated noise is larger than "
                    "the scatter seen; the uncertainties are pessimistic",
                    None,
                )
            )
    return out


def _band_warnings(problem, q: dict, used, values: dict) -> list:
    """Few points in the half-power band, or a sweep that stops short of 3 dB off
    resonance at one end (the curve that dips there must double: see dip_contrast)."""
    out = []
    edges = dip_contrast(problem.setup, problem.model(values), problem.topology)
    short = [side for side, e in zip(("below", "above"), edges) if e < 2.0]
    if len(short) == 1:  # (both short: a weakly coupled circuit, judged by its noise)
        out.append(
            (
                f"the sweep stops short of the half-power point {short[0]} the resonance: "
                "the width rests on one side only; sweep a few bandwidths each side",
                _WIDTH,
            )
        )
    inside = points_in_band(problem, q, used)
    if inside is not None and inside < MIN_POINTS_IN_BAND:
        f0 = resonance_seen(q)
        half = f0 / (2.0 * q["Q_loaded"].value)
        out.append(
            (
                f"only {inside} points lie within the half-power band "
                f"({format_quantity(f0 - half, 'Hz')} to {format_quantity(f0 + half, 'Hz')}): "
                "the width and the values that follow from it are poorly pinned; sweep "
                "finer near the resonance (fitkit plan says where)",
                _WIDTH,
            )
        )
    return out


def points_in_band(problem, q: dict, used) -> int | None:
    """How many points kept lie within the loaded half-power band (None: not known)."""
    if not q["Q_loaded"].determined:
        return None
    f0 = resonance_seen(q)
    half = f0 / (2.0 * q["Q_loaded"].value)
    return int(np.sum(np.abs(problem.f[used] - f0) <= half))


def resonance_seen(q: dict) -> float:
    """Where the sweep shows the resonance: f0, except for a coil whose self-capacitance
    adds to C, ``1 / (2 pi sqrt(L (C + C_self)))`` (the series resonance of the coil's
    reactance ``w L / (1 - w^2 L C_self)`` with C, solved for zero; derived, loss
    neglected), so the band is counted where the points are."""
    f0 = q["f0"].value
    c_self = q.get("C_self")
    if c_self is None or not c_self.determined or not q["C"].determined:
        return f0
    return f0 * math.sqrt(q["C"].value / (q["C"].value + c_self.value))


def _adequacy(problem, result, noise, used) -> list:
    """The model-adequacy checks on the last pass's residuals (see fitkit.adequacy)."""
    values = result.params.valuesdict()
    a, b = problem.scaled_residual(values, used, noise.domain)
    if noise.domain == "additive" and b is not None:
        # along and across the model's direction: its magnitude and its phase
        model = problem.model(values, used)
        turn = np.conj(model) / np.maximum(np.abs(model), 1e-300)
        r = (a + 1j * b) * turn
        parts = {"magnitude": r.real / noise.sigma, "phase": r.imag / noise.sigma}
        # a misfit also splits the scatter: the circle is judged only on a model that fits
        found = check_structure(parts) or check_circle(r.real, r.imag, len(parts))
    else:
        phase = None if b is None else b / noise.sigma_phase_rad
        parts = {"magnitude": a / noise.sigma, "phase": phase}
        found = check_structure(parts)
    if not found:
        return []
    if all(x.test == "circle" for x in found):
        return [(found[0].text, "all")]
    hint = (
        " (try --model auto: a tank, a coil with self-capacitance, a loss growing as sqrt(f))"
        if problem.forced and problem.topology.name == "series"
        else ""
    )
    texts = "; ".join(x.text for x in found)
    return [
        (
            f"the {problem.topology.label} model does not describe this sweep: {texts}. "
            "The values and their uncertainties are doubtful; look at the plot" + hint,
            "all",
        )
    ]


def _noise_domain_hint(problem, result, noise, used) -> str:
    """Say so when the scatter follows the size of the reading and the weighting does not.

    Additive weighting assumes the same scatter on every point; readings whose error is a
    share of the reading (dB meters, impedance analysers) scatter in proportion to their
    size, and then the points near the peak get too little say and the error bars are
    wrong. Judged by the rank correlation of the residual size with the reading's size;
    only when the user imposed the weighting (otherwise the data chose it).
    """
    if noise.domain != "additive" or used.size < 30 or not (noise.stated or noise.fixed_domain):
        return ""
    if noise.per_point is not None:  # each point's scatter is stated, growing or not
        return ""
    a, b = problem.raw_residual(result.params.valuesdict(), used, "additive")
    size = np.abs(a) if b is None else np.hypot(a, b)
    reading = np.abs(problem.data[used])
    rho = _rank_correlation(size, reading)
    if rho < 0.5:
        return ""
    return (
        f"the scatter grows with the reading (rank correlation {rho:.2f}): the instrument's "
        "error looks like a share of the reading; fit again with a relative noise, e.g. "
        "--noise relative, --noise 1% or --noise 0.05dB,0.3deg"
    )


def _rank_correlation(x: np.ndarray, y: np.ndarray) -> float:
    """Spearman's rank correlation (ties broken by position; enough for a warning)."""
    rx = np.argsort(np.argsort(x))
    ry = np.argsort(np.argsort(y))
    return float(np.corrcoef(rx, ry)[0, 1])


#: the share of honest fits whose chi-square falls below (above) the accepted range
_CHI_SQUARE_TAIL = 0.001


def _per_point_chi_square(redchi: float, nfree: int) -> list:
    """Per-point sigmas from the file are taken as stated, the covariance not rescaled;
    a chi-square outside the central 99.8 % of the chi-square distribution for these
    degrees of freedom (stated sigmas true and the model right) says they are wrong,
    and the values' uncertainties with them."""
    dof = max(int(nfree), 1)
    low, high = (chi2.ppf(p, dof) / dof for p in (_CHI_SQUARE_TAIL, 1.0 - _CHI_SQUARE_TAIL))
    if low <= redchi <= high:
        return []
    if redchi > high:
        why = "the scatter is larger than the sweep's sigmas say, or the model does not fit"
    else:
        why = "the scatter is smaller than the sweep's sigmas say (the uncertainties are too large)"
    return [
        (
            f"reduced chi-square {redchi:.3g} with the sweep's per-point sigmas, outside "
            f"{low:.2f} to {high:.2f} (where 99.8 % of fits with true sigmas fall): {why}; "
            "the uncertainties are doubtful (check the sigma column and its unit, or fit "
            "with --noise estimate to take the level from the residuals)",
            "all",
        )
    ]
