"""Plots of a fit: data and model, residuals on aligned zero lines, the -3 dB band marked,
the values in a box beside the axes; and the overlay of a unit against its reference.

pyplot is imported only where plotting happens, with the Agg backend (see ``axes.py``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fitkit.report.axes import frequency_axis, literal, pyplot, save_figure
from fitkit.result import CircuitFit

#: the values written in the box beside a fit plot
BOX = (("R", "R"), ("L", "L"), ("C", "C"), ("f0", "f0"), ("Q", "Q"), ("Q_loaded", "Q loaded"))


def magnitude_view(fit: CircuitFit) -> tuple[str, bool, str]:
    """How to draw the magnitude: (axis label, in dB, residual kind: dB, % or absolute)."""
    kind = fit.sweep["kind"]
    in_db = bool(fit.sweep.get("recorded_in_db")) or kind in ("ratio", "s11", "s21")
    unit = {"volts": "V rms", "impedance": "ohm"}.get(kind, "ratio")
    if in_db:
        return "magnitude (dB)", True, "dB"
    relative = "relative" in fit.stats.noise  # residuals judged as a share of the reading
    return f"magnitude ({unit})", False, "%" if relative else unit


def half_power_band(f0_hz: float, q: float) -> tuple[float, float]:
    """The -3 dB edges of a resonance of loaded Q:
    ``f0 (sqrt(1 + 1/(4 Q^2)) -+ 1/(2 Q))`` (second-order band-pass, common practice)."""
    root = np.sqrt(1.0 + 1.0 / (4.0 * q * q))
    return f0_hz * (root - 1.0 / (2.0 * q)), f0_hz * (root + 1.0 / (2.0 * q))


def values_box(fit: CircuitFit) -> str:
    """The fitted values, one a line, for the box beside the plot."""
    lines = []
    for name, label in BOX:
        q = fit.quantities.get(name)
        if q is not None:
            lines.append(f"{label} = {q.text()}")
    return "\n".join(lines)


def _aligned_zero(*axes) -> None:
    """Symmetric limits, so the zero lines of twin axes sit at the same height."""
    for ax in axes:
        low, high = ax.get_ylim()
        span = max(abs(low), abs(high)) or 1.0
        ax.set_ylim(-span, span)


def fit_figure(fit: CircuitFit):
    """The figure of a fit made from a sweep (``fit.model_curve`` must be present).

    Returns
    -------
    matplotlib.figure.Figure
        Magnitude (and phase for complex data) with the model, residuals below; the
        frequency axis in Hz/kHz/MHz; the -3 dB band shaded; the values in a box.
    """
    plt = pyplot()
    freq, data, model = fit.model_curve
    has_phase = np.iscomplexobj(data)
    rows = 3 if has_phase else 2
    fig, axes = plt.subplots(rows, 1, sharex=True, figsize=(9.0, 2.3 * rows + 0.9))
    ylabel, in_db, resid_kind = magnitude_view(fit)
    mag_d, mag_m = np.abs(data), np.abs(model)
    if in_db:
        mag_d, mag_m = 20 * np.log10(mag_d), 20 * np.log10(mag_m)
        resid = mag_d - mag_m
    elif resid_kind == "%":
        resid = 100.0 * (mag_d / mag_m - 1.0)
        axes[0].set_yscale("log")  # a reading whose error is a share of it
    else:
        resid = mag_d - mag_m
    top = axes[0]
    top.plot(freq, mag_d, ".", ms=4, color="0.35", label="measured")
    top.plot(freq, mag_m, "-", color="C0", lw=1.5, label="fitted model")
    top.set_ylabel(ylabel)
    if has_phase:
        axes[1].plot(freq, np.degrees(np.angle(data)), ".", ms=4, color="0.35")
        axes[1].plot(freq, np.degrees(np.angle(model)), "-", color="C0", lw=1.5)
        axes[1].set_ylabel("phase (deg)")
    low = axes[-1]
    low.plot(freq, resid, ".", ms=4, color="C3")
    low.set_ylabel(f"magnitude\nresidual ({resid_kind})", color="C3")
    low.axhline(0, color="0.4", lw=0.8)
    twins = [low]
    if has_phase:
        twin = low.twinx()
        twin.plot(freq, np.degrees(np.angle(data / model)), "^", ms=3, color="C2", alpha=0.7)
        twin.set_ylabel("phase\nresidual (deg)", color="C2")
        twins.append(twin)
    _aligned_zero(*twins)
    f0 = fit.quantities["f0"]
    edges = half_power_band(f0.value, fit.quantities["Q_loaded"].value)
    for ax in axes:
        ax.axvspan(*edges, color="C1", alpha=0.12, lw=0)
        ax.axvline(f0.value, color="C1", lw=0.9, ls="--")
        ax.grid(True, which="both", alpha=0.3)
    top.axvspan(0, 0, color="C1", alpha=0.12, label="-3 dB band (loaded)")
    top.legend(loc="upper left", bbox_to_anchor=(1.01, 0.0), fontsize=8, frameon=False)
    frequency_axis(low, float(freq[0]), float(freq[-1]))
    top.text(
        1.01, 1.0, values_box(fit), transform=top.transAxes, va="top", ha="left", fontsize=8,
        bbox={"boxstyle": "round", "facecolor": "white", "edgecolor": "0.6"},
    )  # fmt: skip
    top.set_title(literal(f"{Path(fit.sweep['source']).name}: {fit.topology} fit"), fontsize=10)
    fig.subplots_adjust(left=0.12, right=0.64, top=0.94, bottom=0.09, hspace=0.1)
    return fig


def plot_fit(fit: CircuitFit, path: str | Path) -> Path:
    """Write a PNG (or any format matplotlib knows by the suffix) of :func:`fit_figure`."""
    return save_figure(fit_figure(fit), path, dpi=110)


def drift_figure(unit: CircuitFit, reference: CircuitFit):
    """The unit's sweep and fit overlaid on its reference's (those that kept a curve).

    Returns
    -------
    matplotlib.figure.Figure or None
        Magnitude (and phase when both are complex) against frequency with both
        resonances marked; None when neither fit holds a sweep.
    """
    drawn = [(f, name, style) for f, name, style in (
        (reference, "reference", {"color": "0.45", "ls": "--", "marker": "s"}),
        (unit, "now", {"color": "C3", "ls": "-", "marker": "."}),
    ) if f.model_curve is not None]  # fmt: skip
    if not drawn:
        return None
    plt = pyplot()
    has_phase = all(np.iscomplexobj(f.model_curve[1]) for f, _, _ in drawn)
    fig, axes = plt.subplots(2 if has_phase else 1, 1, sharex=True, squeeze=False,
                             figsize=(9.0, 5.6 if has_phase else 3.6))  # fmt: skip
    axes = axes[:, 0]
    ylabel, in_db, resid_kind = magnitude_view(drawn[-1][0])
    f_min = min(float(f.model_curve[0][0]) for f, _, _ in drawn)
    f_max = max(float(f.model_curve[0][-1]) for f, _, _ in drawn)
    for fit, name, style in drawn:
        freq, data, model = fit.model_curve
        mag_d, mag_m = np.abs(data), np.abs(model)
        if in_db:
            mag_d, mag_m = 20 * np.log10(mag_d), 20 * np.log10(mag_m)
        f0 = fit.quantities["f0"]
        axes[0].plot(freq, mag_d, style["marker"], ms=3, color=style["color"], alpha=0.6,
                     label=f"{name}: measured")  # fmt: skip
        axes[0].plot(freq, mag_m, ls=style["ls"], color=style["color"], lw=1.5,
                     label=f"{name}: fitted\nf0 = {f0.text()}")  # fmt: skip
        if has_phase:
            axes[1].plot(freq, np.degrees(np.angle(data)), style["marker"], ms=3,
                         color=style["color"], alpha=0.6)  # fmt: skip
            axes[1].plot(freq, np.degrees(np.angle(model)), ls=style["ls"],
                         color=style["color"], lw=1.5)  # fmt: skip
        for ax in axes:
            ax.axvline(f0.value, color=style["color"], ls=":", lw=1)
    if resid_kind == "%" and not in_db:
        axes[0].set_yscale("log")
    axes[0].set_ylabel(ylabel)
    if has_phase:
        axes[1].set_ylabel("phase (deg)")
    for ax in axes:
        ax.grid(True, which="both", alpha=0.3)
    axes[0].legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8, frameon=False)
    frequency_axis(axes[-1], f_min, f_max)
    names = (Path(f.sweep["source"]).name for f in (unit, reference))
    axes[0].set_title(literal(" against ".join(names)), fontsize=10)
    fig.subplots_adjust(left=0.1, right=0.64, top=0.92, bottom=0.12, hspace=0.08)
    return fig
