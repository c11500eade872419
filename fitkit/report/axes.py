"""Shared looks of every plot: the Agg backend, a frequency axis in engineering units."""

from __future__ import annotations

import io


def pyplot():
    """pyplot on the Agg backend (imported only where plotting happens; no screen needed)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def literal(text: str) -> str:
    """Text shown as written: a ``$`` in a file name would start matplotlib's math mode."""
    return str(text).replace("$", r"\$")


def frequency_axis(ax, f_min_hz: float, f_max_hz: float, label: str = "frequency") -> None:
    """A logarithmic frequency axis with ticks labelled in Hz, kHz or MHz ("340 kHz").

    A narrow span gets evenly spaced round ticks (a plain log axis would show two or
    three); a span over a decade gets 1-2-5 ticks.
    """
    from matplotlib import ticker

    ax.set_xscale("log")
    ax.set_xlim(f_min_hz, f_max_hz)
    if f_max_hz / f_min_hz > 10:
        ax.xaxis.set_major_locator(ticker.LogLocator(base=10, subs=(1.0, 2.0, 5.0)))
    else:
        ticks = ticker.MaxNLocator(nbins=7, steps=[1, 2, 2.5, 5, 10]).tick_values(
            f_min_hz, f_max_hz
        )
        inside = ticks[(ticks >= f_min_hz) & (ticks <= f_max_hz)]
        ax.xaxis.set_major_locator(ticker.FixedLocator(_spaced(inside, f_min_hz, f_max_hz)))
    ax.xaxis.set_major_formatter(ticker.EngFormatter(unit="Hz", sep=" "))
    ax.xaxis.set_minor_formatter(ticker.NullFormatter())
    ax.set_xlabel(label)


def _spaced(ticks, f_min_hz: float, f_max_hz: float, slots: int = 8) -> list:
    """Drop ticks that would sit closer than 1/slots of the log span to the one before
    (on a log axis the round ticks crowd towards the top)."""
    import math

    least = math.log10(f_max_hz / f_min_hz) / slots
    kept: list = []
    for t in ticks:
        if not kept or math.log10(t / kept[-1]) >= least:
            kept.append(float(t))
    return kept


def save_figure(fig, path, dpi: int = 110):
    """Write the figure (PNG, or any format matplotlib knows by the suffix), close it.

    Returns
    -------
    pathlib.Path
    """
    from pathlib import Path

    plt = pyplot()
    out = Path(path)
    fig.savefig(out, dpi=dpi)
    plt.close(fig)
    return out


def figure_bytes(fig, fmt: str = "png", dpi: int = 110) -> bytes:
    """The figure as image bytes (PNG or SVG), figure closed."""
    plt = pyplot()
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=dpi)
    plt.close(fig)
    return buf.getvalue()
