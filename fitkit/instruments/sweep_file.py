"""The taken points on disk: a sweep file fitkit reads, and the setup file beside it.

The sweep is a comma-separated table, ``Frequency (Hz), Re(H), Im(H)`` (the output
channel over the input channel) and, when the points were read by sine fits,
``sigma (per part)``: each point's own standard deviation of the real and of the
imaginary part (absolute, a ratio like H). The readers take it as the sweep's per-point
sigma, and the fit weights each point by it. Lines above the header,
``# key: value``, hold the instrument identities and settings; readers keep them as
the sweep's metadata. ``# state: incomplete`` marks a sweep that was stopped.

Every point rewrites the file through a temporary file and a rename, so a sweep that is
interrupted keeps every point taken, in a file that is never half written.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

from fitkit.bench_file import DEFAULT_NAME
from fitkit.errors import InputError, refuse_overwrite
from fitkit.instruments.reading import Point
from fitkit.setups import Setup

_HEADER = "Frequency (Hz),Re(H),Im(H)"
_SIGMA = "sigma (per part)"


def write_points(path: str | Path, points: list, metadata: dict) -> None:
    """Write the points (sorted by frequency) with the metadata lines above them."""
    p = Path(path)
    rows = sorted(points, key=lambda pt: pt.freq_hz)
    with_sigma = bool(rows) and all(math.isfinite(pt.sigma) for pt in rows)
    lines = ["# taken by fitkit acquire (H is the output channel over the input channel)"]
    lines += [f"# {key}: {value}" for key, value in metadata.items()]
    lines.append(_HEADER + ("," + _SIGMA if with_sigma else ""))
    for pt in rows:
        cells = [f"{pt.freq_hz:.12g}", f"{pt.ratio.real:.9g}", f"{pt.ratio.imag:.9g}"]
        if with_sigma:
            cells.append(f"{pt.sigma:.4g}")
        lines.append(",".join(cells))
    tmp = p.with_name(p.name + ".part")
    tmp.write_text("\n".join(lines) + "\n", encoding="utf-8")
    os.replace(tmp, p)


def read_points(path: str | Path) -> tuple:
    """The points and metadata of a sweep file written by :func:`write_points`.

    Raises
    ------
    InputError
        The file is not one that ``fitkit acquire`` wrote.
    """
    p = Path(path)
    metadata, points, header = {}, [], None
    for number, line in enumerate(p.read_text(encoding="utf-8").splitlines(), start=1):
        if line.startswith("# "):
            key, sep, value = line[2:].partition(": ")
            if sep:
                metadata[key] = value
            continue
        if header is None:
            header = line
            if not line.startswith(_HEADER):
                raise InputError(
                    "this is not a sweep file that fitkit acquire wrote",
                    remedy="continue only a sweep this command wrote, or choose a new file",
                    path=p,
                    line=number,
                )
            continue
        try:
            cells = [float(c) for c in line.split(",")]
            sigma = cells[3] if len(cells) > 3 else math.nan
            points.append(Point(cells[0], complex(cells[1], cells[2]), sigma, 1))
        except (ValueError, IndexError):
            raise InputError(
                f"cannot read the row {line!r}",
                remedy="repair or remove the row, or start the sweep again",
                path=p,
                line=number,
            ) from None
    return points, metadata


def write_setup_file(folder: str | Path, setup: Setup, *, force: bool = False) -> Path:
    """Write ``fitkit-setup.toml`` describing the bench into ``folder``.

    A setup file there already is kept when it says the same, and refused (unless
    ``force``) when it says something else.
    """
    p = Path(folder) / DEFAULT_NAME
    text = _setup_text(setup)
    if p.is_file() and p.read_text(encoding="utf-8") == text:
        return p
    refuse_overwrite(p, "setup", force)
    p.write_text(text, encoding="utf-8")
    return p


def _setup_text(setup: Setup) -> str:
    lines = [
        "# the bench the sweep beside this file was taken with (fitkit acquire)",
        "[bench]",
        f'arrangement = "{setup.bench}"',
        f'source_resistance = "{setup.source_ohm:.10g}"',
    ]
    if setup.bench == "across":
        lines.append(f'feed_resistor = "{setup.feed_ohm:.10g}"')
    elif setup.sense_ohm is not None:
        lines.append(f'sense_resistor = "{setup.sense_ohm:.10g}"')
    if setup.probe_f:
        lines.append(f'probe_capacitance = "{setup.probe_f:.10g}"')
    lines.append(f'ratio_reference = "{setup.reference}"')
    if setup.relative:
        lines.append("relative = true")
    return "\n".join(lines) + "\n"
