"""Synthetic sweeps with known truth, for recovery tests (seeded; demo-free)."""

from __future__ import annotations

import numpy as np

from fitkit.circuits import series_rlc
from fitkit.setups import Setup
from fitkit.sweep import Sweep

TRUTH = {"R": 5.0, "L": 100e-6, "C": 1e-9}  # f0 = 503.29 kHz, Q = 63.2

SETUPS = {
    "divider-terminal": Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12),
    "divider-open-circuit": Setup(
        "divider", "ratio", sense_ohm=10.0, source_ohm=50.0, reference="open-circuit"
    ),
    "volts": Setup("divider", "volts", sense_ohm=47.0, amplitude_vrms=0.5, display="matched"),
    "impedance": Setup("impedance", "impedance"),
    "reflection": Setup("reflection", "s11", z0_ohm=50.0),
    "series-through": Setup("series-through", "s21", z0_ohm=50.0),
    "shunt-through": Setup("shunt-through", "s21", z0_ohm=50.0),
}


def make_sweep(
    setup: Setup,
    *,
    seed: int,
    noise: float = 1e-3,
    complex_data: bool = True,
    points: int = 401,
    span: tuple = (350e3, 700e3),
    truth: dict = TRUTH,
    relative_noise: bool = False,
    scale: float = 1.0,
) -> Sweep:
    """A sweep of the truth through the setup with seeded Gaussian noise.

    ``noise`` is additive (a fraction of the largest reading) or, with
    ``relative_noise``, a fraction of each reading in magnitude and radians in phase.
    """
    rng = np.random.default_rng(seed)
    f = np.linspace(*span, points)
    m = scale * setup.response(series_rlc(f, truth["R"], truth["L"], truth["C"]), f)
    if relative_noise:
        m = m * np.exp(noise * rng.normal(size=f.size) + 1j * noise * rng.normal(size=f.size))
    else:
        sigma = noise * np.abs(m).max()
        m = m + sigma * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    values = m if complex_data else np.abs(m)
    return Sweep(f, values, setup.kind)
