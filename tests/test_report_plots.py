"""The plots read as the issue asks: engineering-unit frequency ticks, the values in view,
the -3 dB band where the response is 3 dB down, aligned residual zeros, carrier labels
that do not overlap, the batch chart's verdicts told apart by shape as well as colour.
"""

from __future__ import annotations

import itertools
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from fitkit.chain import chain_from_setup
from fitkit.predict import Carrier, predict, values_from_fit
from fitkit.report.axes import pyplot
from fitkit.report.charts import batch_chart, chart_figure
from fitkit.report.plots import drift_figure, fit_figure, half_power_band
from fitkit.report.predict_plot import prediction_figure
from fitkit.spec import Limit
from fitkit.workflow import fit_file

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sweeps"


@pytest.fixture(scope="module")
def series_fit():
    return fit_file(SAMPLES / "hand_wound_series" / "sweep.csv")[0]


@pytest.fixture(autouse=True)
def close_figures():
    yield
    pyplot().close("all")


def tick_texts(ax) -> list[str]:
    ax.figure.canvas.draw()
    lo, hi = ax.get_xlim()
    return [t.get_text() for t in ax.get_xticklabels() if lo <= t.get_position()[0] <= hi]


def test_fit_plot_has_khz_ticks_values_band_and_aligned_zeros(series_fit):
    fig = fit_figure(series_fit)
    axes = fig.axes
    bottom = [ax for ax in axes if ax.get_xlabel()][0]
    ticks = [t for t in tick_texts(bottom) if t]
    assert len(ticks) >= 4 and all(t.endswith(" kHz") for t in ticks), ticks
    text = " ".join(t.get_text() for t in axes[0].texts)
    for name in ("R = ", "L = ", "C = ", "f0 = ", "Q = ", "Q loaded = "):
        assert name in text
    assert "339.3" in text and "uH" in text  # the sample's f0 and L, in engineering units
    assert "-3 dB band (loaded)" in [t.get_text() for t in axes[0].get_legend().get_texts()]
    # the residual axis and its twin: zero at the same height on the page
    low, twin = axes[2], axes[3]
    zero = [ax.transData.transform((1.0, 0.0))[1] for ax in (low, twin)]
    assert zero[0] == pytest.approx(zero[1], abs=0.5)
    assert "residual" in low.get_ylabel() and "residual" in twin.get_ylabel()


def test_half_power_band_is_where_a_series_circuit_is_3db_down():
    # textbook series R-L-C band-pass H = R / (R + j(wL - 1/(wC))): |H|^2 = 1/2 at the
    # band edges, and f1 f2 = f0^2, f2 - f1 = f0 / Q (common practice)
    r, ind, c = 10.0, 220e-6, 1e-9
    f0 = 1 / (2 * np.pi * np.sqrt(ind * c))
    q = 2 * np.pi * f0 * ind / r
    edges = half_power_band(f0, q)
    for f in edges:
        w = 2 * np.pi * f
        h = r / (r + 1j * (w * ind - 1 / (w * c)))
        assert abs(h) ** 2 == pytest.approx(0.5, rel=1e-9)
    assert edges[0] * edges[1] == pytest.approx(f0**2, rel=1e-12)
    assert edges[1] - edges[0] == pytest.approx(f0 / q, rel=1e-12)


def test_predict_plot_labels_every_carrier_without_overlap(series_fit):
    values = values_from_fit(series_fit)
    chain = replace(chain_from_setup(series_fit.setup), circuit=series_fit.topology)
    offsets = (-18e3, -9e3, 9e3, 18e3, 60e3)
    p = predict(values, chain, wanted_hz=340e3, carriers=tuple(Carrier(340e3 + o) for o in offsets))
    fig = prediction_figure(p)
    ax = fig.axes[0]
    assert "wanted 340 kHz" in ax.get_title() and "C = " in ax.get_title()
    labels = [t for t in ax.texts if t.get_text()]
    texts = " ".join(t.get_text() for t in labels)
    for f in ("322 kHz", "331 kHz", "349 kHz", "358 kHz", "400 kHz"):
        assert f in texts
    assert texts.count("rejected") == len(offsets)
    renderer = fig.canvas.get_renderer()
    boxes = [t.get_window_extent(renderer) for t in labels]
    for a, b in itertools.combinations(boxes, 2):
        assert not a.overlaps(b)
    assert all(t.endswith("kHz") for t in tick_texts(ax) if t)


def test_drift_plot_overlays_reference_and_now():
    now = fit_file(SAMPLES / "drift" / "drifted.csv")[0]
    ref = fit_file(SAMPLES / "drift" / "reference.csv")[0]
    fig = drift_figure(now, ref)
    legend = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert any(t.startswith("reference: fitted") for t in legend)
    assert any(t.startswith("now: fitted") for t in legend)
    assert any("kHz" in t for t in tick_texts(fig.axes[-1]))


def test_batch_chart_tells_verdicts_apart_by_shape_and_marks_the_limits():
    limit = Limit("C", "C", "F", 2.09e-9, 2.31e-9, 2.2e-9)
    units = [("a", 2.2e-9, 1e-12, "pass"), ("b", 2.44e-9, 1e-12, "fail"),
             ("c", 2.309e-9, 1e-12, "undecided")]  # fmt: skip
    fig = chart_figure(units, limit, 2.0)
    ax = fig.axes[0]
    markers = {}
    for line in ax.lines:
        if line.get_marker() not in ("None", None, "", "|") and len(line.get_xdata()) == 1:
            markers[float(line.get_ydata()[0])] = line.get_marker()
    assert len({markers[0.0], markers[1.0], markers[2.0]}) == 3  # three shapes
    vertical = sorted(float(ln.get_xdata()[0]) for ln in ax.lines if len(ln.get_xdata()) == 2)
    assert vertical == pytest.approx([2.09, 2.2, 2.31])  # limits and nominal, in nF
    assert ax.get_xlabel().startswith("C (nF)")
    assert [t.get_text() for t in ax.get_yticklabels()] == ["a", "b", "c"]


def test_every_template_ships_with_the_package():
    import fnmatch

    try:
        import tomllib
    except ImportError:  # Python 3.10
        import tomli as tomllib

    root = Path(__file__).resolve().parent.parent
    data = tomllib.loads((root / "pyproject.toml").read_text())
    globs = data["tool"]["setuptools"]["package-data"]["fitkit.report"]
    templates = root / "fitkit" / "report" / "templates"
    files = [p.relative_to(templates.parent).as_posix() for p in templates.iterdir()]
    assert files and all(any(fnmatch.fnmatch(f, g) for g in globs) for f in files), files
    assert "jinja2>=3.1" in data["project"]["dependencies"]


def test_file_names_with_dollars_are_drawn_as_written(series_fit):
    # matplotlib reads text between two $ as math; "\frac" alone there cannot be drawn
    name = r"kit $\frac$ 2.csv"
    svg = batch_chart([(name, 1e-9, 1e-12, "fail")], Limit("C", "C", "F", 0.9e-9, 0.95e-9), 2.0)
    assert svg.startswith(b"<?xml")
    fit = replace(series_fit, sweep={**series_fit.sweep, "source": f"/bench/{name}"})
    fig = fit_figure(fit)
    fig.canvas.draw()  # would raise on a math parse error
    assert fig.axes[0].get_title().startswith(r"kit \$\frac\$ 2.csv")


@pytest.mark.parametrize(
    "span, expected",
    [((10.2e6, 11.2e6), ("10.2 MHz", "10.6 MHz", "11 MHz")),
     ((1e3, 1e6), ("1 kHz", "10 kHz", "100 kHz", "1 MHz")),
     ((30.0, 90.0), ("30 Hz", "40 Hz", "60 Hz"))],
)  # fmt: skip
def test_frequency_axis_labels_round_ticks_in_engineering_units(span, expected):
    from fitkit.report.axes import frequency_axis

    fig, ax = pyplot().subplots()
    frequency_axis(ax, *span)
    texts = [t for t in tick_texts(ax) if t]
    assert set(expected) <= set(texts), texts
    assert len(texts) >= 3 and ax.get_xlabel() == "frequency"
