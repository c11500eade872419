"""Noise models: in which domain the residuals are roughly even, and how big they are.

- ``additive``: the same noise on every point in the measured unit (readings written
  as linear values or real and imaginary parts);
- ``relative``: noise in proportion to the reading, magnitude and phase apart (readings
  written in dB and degrees, and impedance analysers, whose error is a % of |Z|). The
  residual is ``log(model / data)``: its real part is the log-magnitude error, its
  imaginary part the phase error, each weighted by its own sigma.

A stated noise makes the reduced chi-square a check of the model; an estimated one is
taken from the residuals of a first pass, magnitude and phase separately.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from fitkit.errors import SetupError
from fitkit.sweep import Sweep

DB_PER_NEPER = 20.0 / math.log(10.0)

_UNIT_OF_KIND = {"ratio": "", "volts": "V", "impedance": "ohm", "s11": "", "s21": ""}


@dataclass(frozen=True)
class Noise:
    """Noise domain and sigmas; ``None`` sigmas are estimated from the residuals."""

    domain: str
    sigma: float | None = None  # additive: measured unit; relative: log-magnitude (nepers)
    sigma_phase_rad: float | None = None
    stated: bool = False

    def describe(self, kind: str) -> str:
        how = "stated" if self.stated else "estimated from the fit residuals"
        if self.domain == "additive":
            unit = _UNIT_OF_KIND[kind]
            return f"additive, {how}: {self.sigma:.3g} {unit}".rstrip()
        text = f"relative, {how}: {self.sigma * DB_PER_NEPER:.3g} dB in magnitude"
        if self.sigma_phase_rad is not None:
            text += f", {math.degrees(self.sigma_phase_rad):.3g} deg in phase"
        return text


def default_domain(sweep: Sweep) -> str:
    """Relative for dB readings and impedance analysers; additive otherwise."""
    return "relative" if sweep.recorded_in_db or sweep.kind == "impedance" else "additive"


def parse_noise(text: str | None, sweep: Sweep) -> Noise:
    """Read a stated noise level, or choose the domain for an estimated one.

    Accepted forms: ``"0.05dB"``, ``"0.05dB,0.3deg"``, ``"1%"`` (relative; phase in
    radians equal to the relative magnitude error unless given), or a plain number such
    as ``"2e-3"`` (additive, in the measured unit: volts, ohm, or a ratio).

    Raises
    ------
    SetupError
        When the text is none of these.
    """
    if text is None or str(text).strip().lower() in ("", "auto", "estimate"):
        return Noise(default_domain(sweep))
    parts = [p.strip().lower() for p in str(text).split(",") if p.strip()]
    magnitude, phase = None, None
    for part in parts:
        m = re.fullmatch(r"((?:\d+(?:\.\d*)?|\.\d+)(?:e[-+]?\d+)?)\s*(db|%|deg|rad)?", part)
        if not m or not 0 < float(m.group(1)) < math.inf:
            raise SetupError(
                f"cannot read the noise level {text!r}",
                remedy="write e.g. '0.05dB', '0.05dB,0.3deg', '1%' or an additive '2e-3'",
            )
        value, unit = float(m.group(1)), m.group(2)
        if unit == "db":
            magnitude = value / DB_PER_NEPER
        elif unit == "%":
            magnitude = value / 100.0
        elif unit == "deg":
            phase = math.radians(value)
        elif unit == "rad":
            phase = value
        else:
            if len(parts) > 1:
                raise SetupError(
                    f"an additive noise level is one number, not {text!r}",
                    remedy="give either '2e-3' (additive) or '0.05dB,0.3deg' (relative)",
                )
            return Noise("additive", value, None, stated=True)
    if magnitude is None:
        raise SetupError(
            f"the noise level {text!r} gives a phase error but no magnitude error",
            remedy="add the magnitude error, e.g. '0.05dB,0.3deg'",
        )
    if sweep.is_complex and phase is None:
        phase = magnitude
    return Noise("relative", magnitude, phase if sweep.is_complex else None, stated=True)
