"""The plot of a prediction: the chain's response around the wanted carrier, each
carrier labelled with its frequency and rejection, labels set in rows so none overlap.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np

from fitkit.chain import response_db
from fitkit.predict import Prediction, value_and_error
from fitkit.report.axes import frequency_axis, pyplot, save_figure
from fitkit.units import format_quantity

#: height of one row of labels, as a share of the axes
ROW = 0.1


def _label_rows(widths_px: list[tuple[float, float]], gap_px: float = 6.0) -> list[int]:
    """A row for each label (given as left and right edges, in x order) so that labels
    in one row do not touch; the first row that has room is taken."""
    ends: list[float] = []
    rows = []
    for left, right in widths_px:
        for i, end in enumerate(ends):
            if left > end + gap_px:
                ends[i] = right
                rows.append(i)
                break
        else:
            ends.append(right)
            rows.append(len(ends) - 1)
    return rows


def prediction_figure(p: Prediction):
    """The figure of a prediction.

    Returns
    -------
    matplotlib.figure.Figure
        The response relative to the wanted carrier (dB) against frequency (Hz/kHz/MHz),
        the wanted carrier and every unwanted one marked and labelled with its frequency
        and rejection; the chain, the wanted carrier and C in the title.
    """
    plt = pyplot()
    wanted = p.wanted_hz
    marks = [wanted] + [r.carrier.freq_hz for r in p.carriers]
    width = 4.0 * wanted / max(value_and_error(p.q_loaded)[0], 1.0)
    lo = max(min(min(marks) / 1.03, wanted - width), wanted / 10.0)
    hi = max(max(marks) * 1.03, wanted + width)
    freq = np.geomspace(lo, hi, 1500)
    curve = response_db(freq, wanted, p.values, p.chain)
    fig, ax = plt.subplots(figsize=(9.0, 5.2))
    ax.plot(freq, curve, color="C0", lw=1.5)
    ax.axvline(wanted, color="C2", ls="--", lw=1)
    points = [(wanted, 0.0, f"wanted\n{format_quantity(wanted, 'Hz')}", "C2")]
    for r in p.carriers:
        rej, err = value_and_error(r.rejection_db)
        text = format_quantity(rej, "", err or None).replace(" +/- ", " dB +/- ") + " dB"
        points.append((r.carrier.freq_hz, -rej, f"{format_quantity(r.carrier.freq_hz, 'Hz')}\n"
                       f"rejected {text}", "C3"))  # fmt: skip
        ax.plot(r.carrier.freq_hz, -rej, "o", color="C3", ms=5)
    frequency_axis(ax, lo, hi)
    ax.set_ylabel("response relative to the wanted carrier (dB)")
    ax.grid(True, which="both", alpha=0.3)
    points.sort(key=lambda m: m[0])
    labels = [
        ax.text(f, 0, text, ha="center", va="bottom", fontsize=8, color=colour,
                transform=ax.get_xaxis_transform(),
                bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": colour, "lw": 0.6})
        for f, _, text, colour in points
    ]  # fmt: skip
    renderer = fig.canvas.get_renderer()
    edges = [(b.x0, b.x1) for b in (t.get_window_extent(renderer) for t in labels)]
    rows = _label_rows(edges)
    band = ROW * (max(rows) + 1) + 0.02
    top = max(float(np.max(curve)), 0.0) + 3.0
    bottom = top - (top - float(np.min(curve))) / (1.0 - band - 0.04)
    ax.set_ylim(bottom, top)
    for text, row, (f, y, _, colour) in zip(labels, rows, points):
        text.set_y(0.01 + ROW * row)
        line = {"arrowstyle": "-", "color": colour, "lw": 0.5, "alpha": 0.6}
        ax.annotate("", xy=(f, y), xytext=(f, 0.01 + ROW * row + 0.08),
                    textcoords=ax.get_xaxis_transform(), arrowprops=line)  # fmt: skip
    c_value, c_err = value_and_error(p.values["C"])
    c_text = format_quantity(c_value, "F", c_err or None)
    title = f"wanted {format_quantity(wanted, 'Hz')}, C = {c_text} ({p.c_origin})"
    chain = textwrap.fill(p.chain.describe(), 100)
    ax.set_title(f"{title}\n{chain}", fontsize=9)
    fig.tight_layout()
    return fig


def plot_prediction(p: Prediction, path: str | Path) -> Path:
    """Write :func:`prediction_figure` as PNG (or any format matplotlib knows by suffix)."""
    return save_figure(prediction_figure(p), path, dpi=120)
