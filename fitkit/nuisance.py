"""Bench imperfections with one number each, fitted beside the circuit when the data ask.

They belong to the bench, not to the circuit, and each is common on real benches:

- ``delay``: a pure time delay in the phase, ``exp(-j 2 pi f tau)``: skew between two
  scope channels, a cable, a calibration plane a few centimetres off (complex readings);
- ``tilt``: the generator's level changing slowly across the span, ``(f / fc)^t`` with
  fc the sweep's geometric centre, for readings with no reference channel (volts, or a
  relative scale); reported in dB per decade;
- ``floor``: a reading floor under a magnitude-only reading (hum, the noise floor of the
  detector; the mean magnitude of a weak signal in noise sits on one too):
  ``sqrt(|m|^2 + floor^2)``; reported in dB below the largest reading.

Which terms a sweep gets is decided by the Bayesian information criterion in
:mod:`fitkit.model_choice`; a term that does not earn its place is left out.
"""

from __future__ import annotations

import math

import numpy as np

from fitkit.setups import GENERATOR_BENCHES

#: internal parameter of each term, and its search range
PARAMETER = {"delay": "delay_turns", "tilt": "tilt", "floor": "ln_floor"}
BOUNDS = {"delay_turns": (-20.0, 20.0), "tilt": (-3.0, 3.0), "ln_floor": (-25.0, 0.5)}
#: where a term starts when no fit has suggested a value (no delay, no tilt, a low floor)
NEUTRAL = {"delay_turns": 0.0, "tilt": 0.0, "ln_floor": -10.0}


def applicable(sweep, setup) -> tuple:
    """The terms that can apply to this sweep on this bench."""
    terms = []
    if sweep.is_complex:
        terms.append("delay")
    no_reference = sweep.kind == "volts" or (
        setup.bench in GENERATOR_BENCHES and not setup.is_calibrated
    )
    if no_reference:
        terms.append("tilt")
    if not sweep.is_complex:
        terms.append("floor")
    return tuple(terms)


class Bench:
    """The terms switched on for one sweep, and the sweep's reference scales."""

    def __init__(self, sweep, terms: tuple = ()) -> None:
        self.terms = tuple(terms)
        f = sweep.freq_hz
        self.f_max = float(f[-1])
        self.f_centre = float(np.sqrt(f[0] * f[-1]))
        self.peak = float(np.max(np.abs(sweep.values)))

    def apply(self, m: np.ndarray, f: np.ndarray, values: dict) -> np.ndarray:
        """The reading ``m`` of the circuit as this bench would show it."""
        return self.apply_with_derivatives(m, f, values, None, ())[0]

    def apply_with_derivatives(self, m, f, values: dict, jac, names) -> tuple:
        """:meth:`apply`, carrying the derivatives ``jac`` of ``m`` (points x ``names``)
        through it and filling the columns of the terms' own parameters."""

        def fill(name, column):
            if name in names:
                jac[:, names.index(name)] = column

        if "delay" in self.terms:
            slope = -2j * np.pi * (f / self.f_max)
            factor = np.exp(slope * values["delay_turns"])
            m = m * factor
            if jac is not None:
                jac = jac * factor[:, None]
                fill("delay_turns", m * slope)
        if "tilt" in self.terms:
            log_f = np.log(f / self.f_centre)
            factor = np.exp(values["tilt"] * log_f)
            m = m * factor
            if jac is not None:
                jac = jac * factor[:, None]
                fill("tilt", m * log_f)
        if "floor" in self.terms:
            level = self.peak * math.exp(values["ln_floor"])
            floored = np.sqrt(np.abs(m) ** 2 + level**2)
            if jac is not None:
                jac = np.real(np.conj(m)[:, None] * jac) / floored[:, None]
                fill("ln_floor", level**2 / floored)
            m = floored
        return m, jac

    def start(self, term: str, f: np.ndarray, model: np.ndarray, data: np.ndarray) -> float:
        """A starting value from the circuit-only fit's model and the data."""
        if term == "delay":
            # the slope of the phase left over: tau = -d(phase)/d(omega)
            phase = np.unwrap(np.angle(data / model))
            slope = np.polyfit(f / self.f_max, phase, 1)[0]
            return float(np.clip(-slope / (2 * np.pi), *BOUNDS["delay_turns"]))
        if term == "floor":
            return math.log(max(0.5 * float(np.min(np.abs(data))) / self.peak, 1e-10))
        return 0.0

    def reported(self, values: dict) -> dict:
        """Reported values (plain or ``uncertainties`` numbers) of the terms switched on."""
        out = {}
        if "delay" in self.terms:
            out["delay"] = values["delay_turns"] / self.f_max
        if "tilt" in self.terms:
            out["tilt"] = 20.0 * values["tilt"]
        if "floor" in self.terms:
            out["floor"] = values["ln_floor"] * (20.0 / math.log(10.0))
        return out

    def describe(self) -> str:
        words = {
            "delay": "a delay in the phase",
            "tilt": "a tilt of the generator level",
            "floor": "a reading floor",
        }
        return ", ".join(words[t] for t in self.terms)
