"""The batch summary chart: each unit's value with its expanded uncertainty against the
specification's limits and nominal. Verdicts differ in colour and in marker shape, so the
chart still reads in grey print.
"""

from __future__ import annotations

import math

from fitkit.report.axes import figure_bytes, literal, pyplot
from fitkit.spec import Limit
from fitkit.units import engineering_scale

#: above this many units, a chart names only the units that did not pass
DENSE = 80
#: verdict word -> (marker, face colour, edge colour, legend text)
MARKS = {
    "pass": ("o", "#176317", "#176317", "pass"),
    "undecided": ("D", "white", "#8a5a00", "undecided"),
    "fail": ("X", "#a31515", "#a31515", "fail"),
}


def batch_chart(units: list[tuple[str, float, float | None, str]], limit: Limit, k: float) -> bytes:
    """:func:`chart_figure` as SVG bytes."""
    return figure_bytes(chart_figure(units, limit, k), "svg")


def chart_figure(units: list[tuple[str, float, float | None, str]], limit: Limit, k: float):
    """One judged value over the batch.

    Parameters
    ----------
    units : list of (name, value, standard uncertainty or None, verdict word)
        In the order to show them, top first (values in SI).
    limit : Limit
        The specification's limits (and nominal) for the value.
    k : float
        Coverage factor of the error bars (the expanded uncertainty is ``k u``).

    Returns
    -------
    matplotlib.figure.Figure
        One row per unit: the value, a bar of +/- k u, a marker by verdict; the limits
        dashed, the nominal dotted.
    """
    plt = pyplot()
    values = [v for _, v, _, _ in units]
    anchors = [x for x in (limit.nominal, limit.low, limit.high) if x is not None] + values
    scale, prefix = engineering_scale(max(abs(x) for x in anchors)) if limit.unit else (1.0, "")
    dense = len(units) > DENSE
    height = min(1.3 + (0.1 if dense else 0.24) * len(units), 30.0)
    fig, ax = plt.subplots(figsize=(7.5, height))
    shown = set()
    for row, (_, value, u, word) in enumerate(units):
        marker, face, edge, text = MARKS.get(word, MARKS["undecided"])
        err = k * u / scale if u is not None and math.isfinite(u) else None
        ax.errorbar(
            value / scale, row, xerr=err, fmt=marker, ms=7 if word == "fail" else 5,
            mfc=face, mec=edge, ecolor="0.35", elinewidth=1, capsize=2,
            label=None if word in shown else text,
        )  # fmt: skip
        shown.add(word)
    for edge_value, style, text in (
        (limit.low, "--", "limit"),
        (limit.high, "--", "limit"),
        (limit.nominal, ":", "nominal"),
    ):
        if edge_value is not None:
            label = None if text in shown else text
            ax.axvline(edge_value / scale, color="0.2", ls=style, lw=1, label=label)
            shown.add(text)
    # a large batch names only the units that need a look
    names = [literal(n) if not dense or w != "pass" else "" for n, _, _, w in units]
    ax.set_yticks(range(len(units)), names, fontsize=8)
    ax.set_ylim(len(units) - 0.5, -0.5)
    unit_text = f" ({prefix}{limit.unit})" if limit.unit else ""
    ax.set_xlabel(f"{limit.name.replace('_', ' ')}{unit_text}, bars +/- {k:g} u", fontsize=9)
    ax.tick_params(axis="x", labelsize=8)
    ax.grid(True, axis="x", alpha=0.3)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8, frameon=False)
    fig.tight_layout()
    return fig
