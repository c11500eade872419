"""How fast read_sweep reads a large plain CSV sweep, as a ratio to numpy.loadtxt and
pandas.read_csv.

Writes two 1,000,000-row sweeps to a temporary directory: a magnitude-only one
(frequency, linear gain) and a complex one (frequency, gain in dB, phase in degrees,
which read_sweep turns into complex values). Times the three readers on the same file in
the same run (best of a few runs each; read_sweep also hashes the file, SHA-256) and
measures the peak Python memory of read_sweep and pandas with tracemalloc against the
size of the data: the file on disk and the float64 arrays in it.

Run: python benchmarks/read_speed.py [rows]
"""

from __future__ import annotations

import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd

from fitkit.readers import read_sweep

REPEATS = 3


def write_sweep(path: Path, rows: int, *, with_phase: bool) -> None:
    """A plain CSV sweep with a header line, seeded."""
    rng = np.random.default_rng(20240501)
    columns = {"freq (Hz)": np.linspace(100e3, 10e6, rows)}
    if with_phase:
        columns["gain (dB)"] = rng.normal(-6.0, 3.0, rows)
        columns["phase (deg)"] = rng.uniform(-90.0, 90.0, rows)
    else:
        columns["gain"] = rng.uniform(0.01, 1.0, rows)
    pd.DataFrame(columns).to_csv(path, index=False)


def best_time(func) -> float:
    times = []
    for _ in range(REPEATS):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times)


def peak_bytes(func) -> int:
    tracemalloc.start()
    func()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak


def measure(path: Path, rows: int, label: str) -> None:
    """Print time and memory of read_sweep against pandas.read_csv for one file."""
    file_bytes = path.stat().st_size
    array_bytes = pd.read_csv(path).to_numpy().nbytes

    def ours():
        return read_sweep(path)

    def theirs():
        return pd.read_csv(path)

    def plain_numpy():
        return np.loadtxt(path, delimiter=",", skiprows=1)

    assert ours().points == rows
    t_numpy, t_pandas, t_ours = best_time(plain_numpy), best_time(theirs), best_time(ours)
    m_pandas, m_ours = peak_bytes(theirs), peak_bytes(ours)
    print(
        f"{label}: {rows} rows, file {file_bytes / 1e6:.1f} MB, arrays {array_bytes / 1e6:.1f} MB"
    )
    print(
        f"  numpy.loadtxt {t_numpy:.3f} s, pandas.read_csv {t_pandas:.3f} s, "
        f"read_sweep {t_ours:.3f} s"
    )
    print(
        f"  time ratio read_sweep / numpy.loadtxt: {t_ours / t_numpy:.2f}; "
        f"/ pandas.read_csv: {t_ours / t_pandas:.2f}"
    )
    print(
        f"  peak memory: read_sweep {m_ours / 1e6:.1f} MB "
        f"({m_ours / file_bytes:.2f}x file, {m_ours / array_bytes:.2f}x arrays); "
        f"pandas.read_csv {m_pandas / 1e6:.1f} MB ({m_pandas / array_bytes:.2f}x arrays)"
    )


def main(rows: int) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        for with_phase, label in ((False, "freq, gain"), (True, "freq, gain dB, phase deg")):
            path = Path(tmp) / "sweep.csv"
            write_sweep(path, rows, with_phase=with_phase)
            measure(path, rows, label)


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000)
