"""Memory of the ``fitkit batch`` main process against the number of sweeps.

Run from the repository root: ``python benchmarks/batch_memory.py [--counts 100,1000]``.
Writes the seeded synthetic sweeps of ``batch_speed.py`` (fewer points, to be quick),
runs the batch command on the first 100, then on all 1,000 (each in a fresh process, two
workers, so the main process only hands out work and writes the results), and prints the
resident memory of the main process alone when it has written the results (and its
peak), and the growth per sweep between the two runs. Flat means the growth per sweep
is a few hundred bytes at most, against the main process's own hundred-odd MiB.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from batch_speed import write_sweeps  # noqa: E402

#: runs the batch command in this process, then prints its own resident memory at the
#: end and at its peak (VmRSS and VmHWM, KiB, from /proc/self/status; Linux)
_RUN_AND_MEASURE = """
import sys
from fitkit.cli import main
try:
    main(sys.argv[1:], standalone_mode=False)
finally:
    with open("/proc/self/status") as fh:
        kib = {ln.split(":")[0]: ln.split()[1] for ln in fh if ln.startswith("Vm")}
    print("memory_kib", kib["VmRSS"], kib["VmHWM"], file=sys.stderr)
"""


def main_memory_mib(folder: Path, out: Path, workers: int, model: str) -> tuple[float, float]:
    """(RSS at the end, peak RSS) in MiB of the batch main process on every sweep in
    ``folder``."""
    cmd = [sys.executable, "-c", _RUN_AND_MEASURE, "batch", str(folder), "--out", str(out)]
    cmd += ["--workers", str(workers), "--model", model]
    done = subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, capture_output=False,
                          stderr=subprocess.PIPE, text=True)  # fmt: skip
    line = [ln for ln in done.stderr.splitlines() if ln.startswith("memory_kib")][-1]
    return int(line.split()[1]) / 1024, int(line.split()[2]) / 1024


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--counts", default="100,1000", help="batch sizes, comma-separated")
    parser.add_argument("--points", type=int, default=201, help="points per sweep")
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--model", default="series")
    args = parser.parse_args()
    counts = [int(c) for c in args.counts.split(",")]
    with tempfile.TemporaryDirectory() as tmp:
        everything = Path(tmp) / "all"
        everything.mkdir()
        write_sweeps(everything, max(counts), args.points)
        ends = []
        for count in counts:
            folder = Path(tmp) / f"first-{count}"
            folder.mkdir()
            for sweep in sorted(everything.glob("unit-*.csv"))[:count]:
                (folder / sweep.name).symlink_to(sweep)
            (folder / "fitkit-setup.toml").symlink_to(everything / "fitkit-setup.toml")
            end, peak = main_memory_mib(
                folder, Path(tmp) / f"out-{count}", args.workers, args.model
            )
            ends.append(end)
            print(
                f"{count:6d} sweeps: main process RSS at the end {end:6.1f} MiB, "
                f"peak {peak:6.1f} MiB"
            )
        for (n0, p0), (n1, p1) in zip(zip(counts, ends), zip(counts[1:], ends[1:])):
            per = (p1 - p0) * 1024 * 1024 / (n1 - n0)
            print(f"growth from {n0} to {n1} sweeps: {p1 - p0:+.1f} MiB = {per:+.0f} bytes a sweep")


if __name__ == "__main__":
    main()
