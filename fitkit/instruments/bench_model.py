"""The physics behind the simulated bench: a generator, a circuit, two digitiser channels.

A generator of EMF ``E`` behind its source resistance drives the circuit through a bench
arrangement of :mod:`fitkit.setups` (a divider with a sense resistor, or the circuit fed
through a resistor). Channel 1 sees the generator's terminal, channel 2 the output; their
ratio is the setup's response against the terminal. The circuit is a series R-L-C, a
tank, or a coil with self-capacitance in series with C. On top, as options: noise per sample,
a slow drift of C, a delay of channel 2 (skew between the channels), a gain tilt of
channel 2 in dB per decade, and an 8-bit converter that saturates at its range.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from fitkit.circuits import coil_in_series, series_rlc, tank
from fitkit.setups import Setup

_ADC_LEVELS = 256  # an 8-bit converter across +-range


@dataclass
class BenchModel:
    """A circuit on a bench, with the bench's imperfections as options.

    Attributes
    ----------
    topology : str
        ``"series"``, ``"tank"`` or ``"coil"``.
    r_ohm, l_h, c_f : float
        The circuit (for the tank and the coil, ``r_ohm`` is the coil's series loss).
    c_self_f : float
        The coil's self-capacitance, across it (``"coil"`` only).
    setup : Setup
        The bench arrangement (``divider`` or ``across``, ratio against the terminal).
    noise_v : float
        RMS noise per sample on each channel, volts.
    drift_per_s : float
        Relative change of C per second since the bench started.
    delay_s : float
        Channel 2 lags channel 1 by this time (skew).
    tilt_db_per_decade : float
        Channel 2's gain error, dB per decade from 1 MHz.
    seed : int
        Seed of the noise.
    """

    topology: str = "series"
    r_ohm: float = 10.0
    l_h: float = 220e-6
    c_f: float = 1e-9
    c_self_f: float = 0.0
    setup: Setup = field(default_factory=lambda: Setup("divider", "ratio", sense_ohm=47.0))
    noise_v: float = 10e-3
    drift_per_s: float = 0.0
    delay_s: float = 0.0
    tilt_db_per_decade: float = 0.0
    seed: int = 1

    def __post_init__(self) -> None:
        self.rng = np.random.default_rng(self.seed)
        self.started = time.monotonic()

    def voltages(self, freq_hz: float, emf_peak_v: float) -> tuple:
        """Complex peak voltages on channel 1 (the terminal) and channel 2 (the output)."""
        f = np.array([freq_hz])
        drift = 1.0 + self.drift_per_s * (time.monotonic() - self.started)
        z = self.impedance(f, self.c_f * drift)
        terminal = Setup(
            self.setup.bench,
            "ratio",
            sense_ohm=self.setup.sense_ohm,
            feed_ohm=self.setup.feed_ohm,
            probe_f=self.setup.probe_f,
        )
        ratio = complex(terminal.response(z, f)[0])
        load = complex(self._input_impedance(z, f)[0])
        v1 = emf_peak_v * load / (self.setup.source_ohm + load)
        skew = np.exp(-2j * math.pi * freq_hz * self.delay_s)
        tilt = 10.0 ** (self.tilt_db_per_decade * math.log10(freq_hz / 1e6) / 20.0)
        return v1, v1 * ratio * skew * tilt

    def impedance(self, freq_hz: np.ndarray, c_f: float) -> np.ndarray:
        """The circuit's impedance with its capacitor at ``c_f``."""
        if self.topology == "coil":
            return coil_in_series(freq_hz, self.r_ohm, self.l_h, c_f, self.c_self_f)
        circuit = series_rlc if self.topology == "series" else tank
        return circuit(freq_hz, self.r_ohm, self.l_h, c_f)

    def _input_impedance(self, z, f):
        w = 2.0 * math.pi * f
        s = self.setup
        if s.bench == "divider":
            return z + s.sense_ohm / (1.0 + 1j * w * s.probe_f * s.sense_ohm)
        zp = 1.0 / (1.0 / z + 1j * w * s.probe_f)
        return s.feed_ohm + zp

    def capture(self, freq_hz, emf_peak_v, duration_s, points, ranges) -> list:
        """Both channels' records (volts), clipped and quantised at their ranges."""
        t = np.arange(points) * (duration_s / points) + self.rng.uniform(0, 1.0 / freq_hz)
        out = []
        for v, rng_v in zip(self.voltages(freq_hz, emf_peak_v), ranges):
            y = np.real(v * np.exp(2j * math.pi * freq_hz * t))
            y = y + self.rng.normal(0.0, self.noise_v, points)
            step = 2.0 * rng_v / _ADC_LEVELS
            out.append(np.clip(np.round(y / step) * step, -rng_v, rng_v))
        return out


#: ready-made simulated benches: name -> (what it is, the model's settings, a span to sweep)
SCENARIOS = {
    "series": (
        "hand-wound 220 uH coil in series with 1 nF, 47 ohm sense resistor",
        {"topology": "series", "r_ohm": 10.0, "l_h": 220e-6, "c_f": 1e-9},
        (100e3, 1e6),
    ),
    "tank": (
        "100 uH coil across 2.2 nF, fed through 10 kohm, the scope across the tank",
        {"topology": "tank", "r_ohm": 3.0, "l_h": 100e-6, "c_f": 2.2e-9, "feed_ohm": 10e3},
        (100e3, 1e6),
    ),
    "coil": (
        "1 mH pile-wound coil (30 pF self-capacitance) in series with 470 pF, "
        "47 ohm sense resistor",
        {"topology": "coil", "r_ohm": 20.0, "l_h": 1e-3, "c_f": 470e-12, "c_self_f": 30e-12},
        (100e3, 1.5e6),
    ),
}


def scenario_model(name: str, **options) -> BenchModel:
    """The simulated bench of a ready-made scenario, with imperfections as options."""
    settings = dict(SCENARIOS[name][1])
    feed = settings.pop("feed_ohm", None)
    if feed is not None:
        settings["setup"] = Setup("across", "ratio", feed_ohm=feed)
    return BenchModel(**settings, **options)
