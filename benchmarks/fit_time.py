"""How long one fit of a 1001-point sweep takes (median of repeated runs), per setup.

Run: ``python benchmarks/fit_time.py``. Prints milliseconds per fit, uncertainties
included, beside a bare ``scipy.optimize.least_squares`` solve of the same problem from
the same start, timed in the same run as a baseline.
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from fitkit.circuits import series_rlc  # noqa: E402
from fitkit.fitting import fit_sweep  # noqa: E402
from tests.synthetic import SETUPS, make_sweep  # noqa: E402


def bare_solve(sweep, setup):
    """Plain least squares on R, L, C (log scale) from the true values: the floor."""
    f, d = sweep.freq_hz, sweep.values

    def resid(p):
        r, l_h, c_f = np.exp(p)
        m = setup.response(series_rlc(f, r, l_h, c_f), f) - d
        return np.concatenate([m.real, m.imag])

    return least_squares(resid, np.log([5.0, 100e-6, 1e-9]), method="lm")


def median_ms(func, repeats=15):
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        func()
        times.append(time.perf_counter() - t)
    return 1e3 * statistics.median(times)


def main() -> None:
    print(f"{'setup':<22} {'fitkit ms':>10} {'bare lsq ms':>12} {'ratio':>6}")
    for name, setup in sorted(SETUPS.items()):
        sweep = make_sweep(setup, seed=1, points=1001)
        fk = median_ms(lambda s=sweep, st=setup: fit_sweep(s, st))
        bare = median_ms(lambda s=sweep, st=setup: bare_solve(s, st))
        print(f"{name:<22} {fk:>10.2f} {bare:>12.2f} {fk / bare:>6.1f}")


if __name__ == "__main__":
    main()
