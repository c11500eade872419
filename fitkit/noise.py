"""Noise models: in which domain the residuals are roughly even, and how big they are.

- ``additive``: the same noise on every point in the measured unit (readings written
  as linear values or real and imaginary parts);
- ``relative``: noise in proportion to the reading, magnitude and phase apart (readings
  written in dB and degrees, and impedance analysers, whose error is a % of |Z|). The
  residual is ``log(model / data)``: its real part is the log-magnitude error, its
  imaginary part the phase error, each weighted by its own sigma.

A stated noise makes the reduced chi-square a check of the model; an estimated one is
taken from the residuals of a first pass, magnitude and phase separately. A sweep whose
file gives each point's own standard deviation (:attr:`fitkit.sweep.Sweep.sigma`) is
weighted point by point (:func:`point_noise`): additive for an absolute column, relative
for one relative to the reading; that noise is stated, not estimated.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

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
    fixed_domain: bool = False  # the user chose the domain; its level is estimated
    #: (smallest, largest) sigma of a sweep weighted point by point; ``sigma`` is then
    #: their median, and each point's own is ``sigma`` times the problem's spread
    per_point: tuple | None = None

    def describe(self, kind: str) -> str:
        if self.per_point is not None:
            return self._describe_per_point(kind)
        how = "stated" if self.stated else "estimated from the fit residuals"
        if self.domain == "additive":
            unit = _UNIT_OF_KIND[kind]
            return f"additive, {how}: {self.sigma:.3g} {unit}".rstrip()
        text = f"relative, {how}: {self.sigma * DB_PER_NEPER:.3g} dB in magnitude"
        if self.sigma_phase_rad is not None:
            text += f", {math.degrees(self.sigma_phase_rad):.3g} deg in phase"
        return text

    def _describe_per_point(self, kind: str) -> str:
        low, high = self.per_point
        if self.domain == "additive":
            span = _span(low, high, _UNIT_OF_KIND[kind])
            return f"additive, per point, the sweep's own sigmas: {span}".rstrip()
        text = f"{_span(100 * low, 100 * high, '%')} of the reading"
        if self.sigma_phase_rad is not None:
            text += " (and as many radians in phase)"
        return f"relative, per point, the sweep's own sigmas: {text}"


def _span(low: float, high: float, unit: str) -> str:
    """'0.2 to 0.5 V', or '0.2 V' when both read the same."""
    low_text, high_text = f"{low:.3g}", f"{high:.3g}"
    return (low_text if low_text == high_text else f"{low_text} to {high_text}") + f" {unit}"


def point_noise(sweep: Sweep) -> Noise:
    """The stated noise of a sweep whose file gives each point's standard deviation.

    Raises
    ------
    SetupError
        When the sweep gives none.
    """
    if sweep.sigma is None:
        raise SetupError(
            "the sweep gives no per-point standard deviation to weight by",
            remedy="add a column such as 'sigma' (in the readings' unit, % or dB), or "
            "drop '--noise column'",
            path=sweep.source,
        )
    s = sweep.sigma
    domain = "relative" if sweep.sigma_relative else "additive"
    typical = float(np.median(s))
    phase = typical if (domain == "relative" and sweep.is_complex) else None
    return Noise(domain, typical, phase, stated=True, per_point=(float(s.min()), float(s.max())))


def default_domain(sweep: Sweep) -> str:
    """Relative for dB readings and impedance analysers; additive otherwise."""
    return "relative" if sweep.recorded_in_db or sweep.kind == "impedance" else "additive"


def parse_noise(text: str | None, sweep: Sweep) -> Noise:
    """Read a stated noise level, or choose the domain for an estimated one.

    ``"auto"`` (or nothing) weights by the sweep's per-point standard deviations when
    its file gives them (:func:`point_noise`), and otherwise lets the data choose
    between even and proportional noise; ``"column"`` asks for the per-point weights
    (refused without them); ``"estimate"`` ignores them and lets the data choose;
    ``"additive"`` or ``"relative"`` imposes that model with its level estimated.
    Stated levels: ``"0.05dB"``, ``"0.05dB,0.3deg"``, ``"1%"`` (relative; phase in
    radians equal to the relative magnitude error unless given), or a plain number such
    as ``"2e-3"`` (additive, in the measured unit: volts, ohm, or a ratio).

    Raises
    ------
    SetupError
        When the text is none of these.
    """
    word = "" if text is None else str(text).strip().lower()
    if word == "column" or (word in ("", "auto") and sweep.sigma is not None):
        return point_noise(sweep)
    if word in ("", "auto", "estimate"):
        return Noise(default_domain(sweep))
    if word in ("additive", "relative"):
        return Noise(word, fixed_domain=True)
    parts = [p.strip().lower() for p in str(text).split(",") if p.strip()]
    magnitude, phase = None, None
    for part in parts:
        m = re.fullmatch(r"((?:\d+(?:\.\d*)?|\.\d+)(?:e[-+]?\d+)?)\s*(db|%|deg|rad)?", part)
        if not m or not 0 < float(m.group(1)) < math.inf:
            raise SetupError(
                f"cannot read the noise level {text!r}",
                remedy="write auto, column, estimate, additive or relative, or a level: "
                "'0.05dB', '0.05dB,0.3deg', '1%' or an additive '2e-3'",
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


#: log-likelihood margin a relative noise must win by before it replaces an additive one
#: (about "strong" evidence on Jeffreys' scale, 2 ln 10 ~ 4.6 nats, rounded up)
RELATIVE_EVIDENCE = 5.0


def relative_evidence(model, data) -> float:
    """How much better noise in proportion to the reading explains ``data`` than even noise.

    Both hypotheses are judged on the same data with their maximum-likelihood scales:
    even (additive) Gaussian scatter, one sigma for every real component, against
    Gaussian scatter of ``log(data / model)`` (log-magnitude and phase, each its own
    sigma), whose density in the data carries the Jacobian ``1/|d|`` per magnitude and
    ``1/|d|^2`` per complex point. The result is the log-likelihood difference less the
    Bayesian information criterion's charge for the extra sigma (positive favours
    relative). Near the noise floor, where readings come close to zero, the logarithm
    punishes the relative model by itself, so weak sweeps stay additive unless the data
    say otherwise.
    """
    d = np.asarray(data)
    m = np.asarray(model)
    if not np.iscomplexobj(d) and np.any(d[np.isfinite(d)] <= 0):
        return -np.inf  # a reading at or below zero cannot come from proportional scatter
    ok = np.isfinite(d) & np.isfinite(m) & (np.abs(d) > 0) & (np.abs(m) > 0)
    d, m = d[ok], m[ok]
    n = d.size
    if n < 10:
        return -np.inf
    if np.iscomplexobj(d):
        r = d - m
        s2 = np.mean(np.concatenate([r.real, r.imag]) ** 2)
        log_add = -n * (math.log(2 * math.pi * s2) + 1.0)
        lr = np.log(d / m)
        s2m, s2p = np.mean(lr.real**2), np.mean(lr.imag**2)
        log_rel = -0.5 * n * (math.log(4 * math.pi**2 * s2m * s2p) + 2.0)
        log_rel -= 2.0 * float(np.sum(np.log(np.abs(d))))
        extra = 1
    else:
        d, m = np.abs(d), np.abs(m)
        s2 = np.mean((d - m) ** 2)
        log_add = -0.5 * n * (math.log(2 * math.pi * s2) + 1.0)
        s2m = np.mean(np.log(d / m) ** 2)
        log_rel = -0.5 * n * (math.log(2 * math.pi * s2m) + 1.0) - float(np.sum(np.log(d)))
        extra = 0
    if not (s2 > 0 and math.isfinite(log_rel)):
        return -np.inf
    return float(log_rel - log_add - 0.5 * extra * math.log(n))
