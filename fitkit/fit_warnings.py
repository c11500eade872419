"""Warnings on a finished fit: what a user must look at before trusting its numbers.

Too few points across the resonance, a loss not resolved above zero, a fit that ended at
a limit of its search range, a magnitude-only ambiguity, structured residuals (the model
does not describe the sweep), and a reduced chi-square that contradicts a stated noise.
A poor fit is state on the result, not an exception: the command decides what to do.
"""

from __future__ import annotations

import math

import numpy as np

from fitkit.units import format_quantity

_MIN_POINTS_IN_BAND = 5


def fit_warnings(problem, result, redchi: float, q: dict, start, noise, used) -> list:
    """What a user must look at before trusting a finished fit (see the module notes)."""
    out = []
    f0, ql = q["f0_hz"].value, q["Q_loaded"].value if q["Q_loaded"].determined else None
    if ql:
        half = f0 / (2.0 * ql)
        inside = int(np.sum(np.abs(problem.f[used] - f0) <= half))
        if inside < _MIN_POINTS_IN_BAND:
            out.append(
                f"only {inside} points lie within the half-power band "
                f"({format_quantity(f0 - half, 'Hz')} to {format_quantity(f0 + half, 'Hz')});"
                " sweep finer near the resonance"
            )
    r = q["R"]
    ext = format_quantity(problem.setup.external_ohm, "ohm")
    if r.determined and r.value <= 0:
        out.append(
            f"R came out at {r.text()}: the fixture resistance in the setup ({ext}) is at "
            "least the whole loop resistance found; check the sense and source resistance"
        )
    elif r.determined and r.value < 2.0 * r.stderr:
        out.append(
            f"R = {r.text()} is barely resolved above zero: the fixture resistance "
            f"({ext}) dominates the loop"
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
            "the fit ended at a limit of its search range (" + ", ".join(at_limit) + "): "
            "the values are not to be trusted; check the setup and the circuit model"
        )
    if start.mirror_scale_ohm is not None and not problem.sweep.is_complex:
        other = start.mirror_scale_ohm - problem.setup.external_ohm
        out.append(
            f"a magnitude-only {problem.sweep.kind} sweep fits R = "
            f"{format_quantity(other, 'ohm')} about as well as the value reported; "
            "measure the phase too to tell them apart"
        )
    z = problem.residual(result.params, used, noise)[: used.size]
    if used.size >= 20:
        lag1 = float(np.corrcoef(z[:-1], z[1:])[0, 1])
        if lag1 > 0.5:
            hint = " (try --model auto: a tank or a coil with self-capacitance)"
            out.append(
                f"the residuals are structured (lag-1 correlation {lag1:.2f}): the "
                f"{problem.topology.label} model does not describe this sweep well and the "
                "uncertainties are too small; look at the plot"
                + (hint if problem.topology.name == "series" else "")
            )
    domain_hint = _noise_domain_hint(problem, result, noise, used)
    if domain_hint:
        out.append(domain_hint)
    if noise.stated:
        dof = max(result.nfree, 1)
        if redchi > 1.0 + 4.0 * math.sqrt(2.0 / dof):
            out.append(
                f"reduced chi-square {redchi:.2f} with the stated noise: the noise "
                "is larger than stated or the model does not fit"
            )
        elif redchi < 1.0 - 4.0 * math.sqrt(2.0 / dof):
            out.append(
                f"reduced chi-square {redchi:.2f}: the stated noise is larger than "
                "the scatter seen; the uncertainties are pessimistic"
            )
    return out


def _noise_domain_hint(problem, result, noise, used) -> str:
    """Say so when the scatter follows the size of the reading and the weighting does not.

    Additive weighting assumes the same scatter on every point; readings whose error is a
    share of the reading (dB meters, impedance analysers) scatter in proportion to their
    size, and then the points near the peak get too little say and the error bars are
    wrong. Judged by the rank correlation of the residual size with the reading's size.
    """
    if noise.domain != "additive" or used.size < 30:
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
        "--noise 1% or --noise 0.05dB,0.3deg"
    )


def _rank_correlation(x: np.ndarray, y: np.ndarray) -> float:
    """Spearman's rank correlation (ties broken by position; enough for a warning)."""
    rx = np.argsort(np.argsort(x))
    ry = np.argsort(np.argsort(y))
    return float(np.corrcoef(rx, ry)[0, 1])
