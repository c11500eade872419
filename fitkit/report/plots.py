"""Plots of a fit: data, model and residuals against log frequency, resonance marked.

pyplot is imported here only, with the Agg backend, so fitting never needs a screen.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from fitkit.result import CircuitFit


def plot_fit(fit: CircuitFit, path: str | Path) -> Path:
    """Write a PNG (or any format matplotlib knows by the suffix) of the fit."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    freq, data, model = fit.model_curve
    has_phase = np.iscomplexobj(data)
    rows = 3 if has_phase else 2
    fig, axes = plt.subplots(rows, 1, sharex=True, figsize=(7.5, 2.4 * rows + 0.6))
    in_db = fit.sweep.get("recorded_in_db") or fit.sweep["kind"] in ("ratio", "s11", "s21")
    relative = "relative" in fit.stats.noise  # residuals judged as a share of the reading
    mag_d, mag_m = np.abs(data), np.abs(model)
    unit = {"volts": "V rms", "impedance": "ohm"}.get(fit.sweep["kind"], "ratio")
    if in_db:
        mag_d, mag_m = 20 * np.log10(mag_d), 20 * np.log10(mag_m)
        ylabel, resid, resid_label = "magnitude (dB)", mag_d - mag_m, "magnitude residual (dB)"
    elif relative:
        ylabel, resid = f"magnitude ({unit})", 100.0 * (mag_d / mag_m - 1.0)
        resid_label = "magnitude residual (%)"
    else:
        ylabel, resid = f"magnitude ({unit})", mag_d - mag_m
        resid_label = f"magnitude residual ({unit})"
    ax = axes[0]
    ax.plot(freq, mag_d, ".", ms=3, color="0.35", label="measured")
    ax.plot(freq, mag_m, "-", color="C0", lw=1.5, label="fitted model")
    ax.set_ylabel(ylabel)
    ax.legend(loc="best", fontsize=8)
    if has_phase:
        ph_d, ph_m = np.degrees(np.angle(data)), np.degrees(np.angle(model))
        axes[1].plot(freq, ph_d, ".", ms=3, color="0.35")
        axes[1].plot(freq, ph_m, "-", color="C0", lw=1.5)
        axes[1].set_ylabel("phase (deg)")
    axes[-1].plot(freq, resid, ".", ms=3, color="C3")
    if has_phase:
        dphase = np.degrees(np.angle(data / model))
        twin = axes[-1].twinx()
        twin.plot(freq, dphase, ".", ms=2, color="C2", alpha=0.6)
        twin.set_ylabel("phase residual (deg)", color="C2")
    axes[-1].axhline(0, color="0.6", lw=0.8)
    axes[-1].set_ylabel(resid_label, color="C3")
    axes[-1].set_xlabel("frequency (Hz)")
    f0 = fit.quantities["f0_hz"]
    if relative and not in_db:
        axes[0].set_yscale("log")  # a reading whose error is a share of it
    for ax in axes:
        ax.set_xscale("log")
        ax.axvline(f0.value, color="C1", lw=0.8, ls="--")
        ax.grid(True, which="both", alpha=0.3)
    axes[0].set_title(
        f"{Path(fit.sweep['source']).name}: f0 = {f0.text()}, "
        f"Q loaded = {fit.quantities['Q_loaded'].text()}",
        fontsize=9,
    )
    fig.tight_layout()
    out = Path(path)
    fig.savefig(out, dpi=110)
    plt.close(fig)
    return out
