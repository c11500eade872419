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
