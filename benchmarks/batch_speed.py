"""How fast ``fitkit batch`` gets through many sweeps, with 1 and 2 worker processes.

Run from the repository root: ``python benchmarks/batch_speed.py [--count 1000]``.
Writes seeded synthetic 1,001-point complex sweeps (a series R-L-C through a 47 ohm
divider, tests/synthetic.py) as CSV files into a temporary folder, runs the batch command
on them as a user would (a separate process, reading and writing included), and prints
sweeps per second and the peak resident memory of the batch and its workers.
"""

from __future__ import annotations

import argparse
import resource
import subprocess
import sys
import tempfile
import time
from itertools import product
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from tests.synthetic import SETUPS, TRUTH, make_sweep  # noqa: E402

SETUP_TOML = '[bench]\narrangement = "divider"\nsense_resistor = "47"\nprobe_capacitance = "15p"\n'


def write_sweeps(folder: Path, count: int, points: int) -> None:
    """``count`` seeded sweeps, each unit's parts spread by 1 % around the truth."""
    rng = np.random.default_rng(2026)
    for i in range(count):
        truth = {k: v * (1 + 0.01 * rng.normal()) for k, v in TRUTH.items()}
        s = make_sweep(SETUPS["divider-terminal"], seed=i, points=points, truth=truth)
        table = np.column_stack([s.freq_hz, s.values.real, s.values.imag])
        with (folder / f"unit-{i:04d}.csv").open("w", encoding="utf-8") as fh:
            fh.write("freq (Hz),re,im\n")
            np.savetxt(fh, table, delimiter=",", fmt="%.9g")
    (folder / "fitkit-setup.toml").write_text(SETUP_TOML, encoding="utf-8")


def timed_batch(folder: Path, out: Path, workers: int, model: str) -> tuple[float, float]:
    """(seconds, peak RSS in MiB of the largest child so far) of one batch run."""
    start = time.perf_counter()
    cmd = [sys.executable, "-c", "from fitkit.cli import main; main()", "batch", str(folder),
           "--out", str(out), "--workers", str(workers), "--model", model]  # fmt: skip
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    seconds = time.perf_counter() - start
    peak_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss  # KiB on Linux
    return seconds, peak_kib / 1024


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=1000, help="sweeps to generate")
    parser.add_argument("--points", type=int, default=1001, help="points per sweep")
    parser.add_argument(
        "--models", default="series,auto", help="circuit models to time, comma-separated"
    )
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "sweeps"
        folder.mkdir()
        start = time.perf_counter()
        write_sweeps(folder, args.count, args.points)
        print(f"wrote {args.count} sweeps of {args.points} points in "
              f"{time.perf_counter() - start:.1f} s")  # fmt: skip
        for model, workers in product(args.models.split(","), (1, 2)):
            out = Path(tmp) / f"out-{model}-{workers}"
            seconds, peak = timed_batch(folder, out, workers, model)
            print(
                f"--model {model}, workers={workers}: {args.count} sweeps in {seconds:.1f} s = "
                f"{args.count / seconds:.1f} sweeps/s ({args.count / seconds / workers:.1f} per "
                f"worker); peak RSS of any process so far {peak:.0f} MiB"
            )


if __name__ == "__main__":
    main()
