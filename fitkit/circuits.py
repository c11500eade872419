"""Circuit topologies: frequency and component values in, complex impedance out.

Pure numpy, no files, no fitting. One function per topology.
"""

from __future__ import annotations

import numpy as np

TWO_PI = 2.0 * np.pi


def series_rlc(freq_hz: np.ndarray, r_ohm: float, l_h: float, c_f: float) -> np.ndarray:
    """Impedance of R, L and C in series: ``Z = R + j w L + 1 / (j w C)``.

    Examples
    --------
    >>> abs(series_rlc(np.array([1.0 / (TWO_PI * np.sqrt(1e-4 * 1e-10))]), 5.0, 1e-4, 1e-10)[0])
    5.0
    """
    w = TWO_PI * np.asarray(freq_hz, dtype=np.float64)
    return r_ohm + 1j * (w * l_h - 1.0 / (w * c_f))


def tank(freq_hz: np.ndarray, r_ohm, l_h: float, c_f: float) -> np.ndarray:
    """A coil (L with series loss r) across a capacitor C: ``(r + j w L) || 1/(j w C)``.

    ``r_ohm`` may be an array (a loss that changes with frequency).
    """
    w = TWO_PI * np.asarray(freq_hz, dtype=np.float64)
    return 1.0 / (1.0 / (r_ohm + 1j * w * l_h) + 1j * w * c_f)


def coil_in_series(freq_hz: np.ndarray, r_ohm, l_h: float, c_f: float, cself_f: float):
    """A real coil (L with loss r, its self-capacitance Cself across both) in series with C.

    Below the coil's self-resonance ``1/(2 pi sqrt(L Cself))`` it acts as an inductance
    that grows with frequency, ``L / (1 - w^2 L Cself)`` (Terman, Radio Engineers'
    Handbook, 1943).
    """
    w = TWO_PI * np.asarray(freq_hz, dtype=np.float64)
    return tank(freq_hz, r_ohm, l_h, cself_f) + 1.0 / (1j * w * c_f)
