"""Every speed target of fitkit measured in one run, each beside its baseline, with the ratio.

Run from the repository root: ``python benchmarks/speed.py [--quick] [--only PARTS]``.
PARTS, comma-separated, from:

- ``startup``: CPU time of ``fitkit --help``, ``--version``, ``inspect FILE`` and ``plan``
  (the bound only), each a fresh process, against ``python -c pass``;
- ``reading``: ``read_sweep`` against ``numpy.loadtxt`` on the same plain CSV files
  (1,001 and 100,000 rows), in this process;
- ``batch``: a batch of seeded synthetic 1,001-point sweeps (tests/synthetic.py) with
  ``--model series`` and ``auto``, reading and writing included: run in this process
  with one worker, once warm, for the CPU time a sweep costs, inside ``fit_sweep`` and
  outside it, and the memory of the fitting process as sweeps go by; then as the
  command, a fresh process with 1 and 2 workers, for the start-up and the wall time;
- ``points``: the CPU time of one ``--model series`` fit against the number of points
  (101 to 100,000), per point, and the fixed cost: the line through 101 and 1,001
  points, at 0 points;
- ``fit``: the fit against a bare least-squares solve, from ``benchmarks/fit_time.py``'s
  ``measure(points, model)``.

Methods compared are timed in the same run, interleaved round by round, and the median
is kept, so a busy machine slows both sides alike. Times are CPU times (user + system);
the command's CPU counts every process of the batch (its fork server and workers are
adopted and reaped here, Linux).
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import platform
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))
# subprocesses use this checkout's fitkit, whatever is installed
os.environ["PYTHONPATH"] = os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))

from batch_speed import write_sweeps  # noqa: E402

from fitkit.readers import read_sweep  # noqa: E402
from tests.synthetic import SETUPS, make_sweep  # noqa: E402

PARTS = ("startup", "reading", "batch", "points", "fit")
SAMPLE = ROOT / "sample_sweeps/hand_wound_series/sweep.csv"


def row(what: str, measured: str, baseline: str, ratio: str, target: str) -> None:
    print(f"  {what:<34} {measured:>14} {baseline:>14} {ratio:>8}   {target}")


def header(title: str, measured: str = "measured", baseline: str = "baseline") -> None:
    print(f"\n{title}")
    row("", measured, baseline, "ratio", "target")


def met(ok: bool) -> str:
    return "met" if ok else "MISSED"


def interleaved(methods: dict[str, Callable[[], float]], rounds: int) -> dict[str, float]:
    """The median of each method's measurement, the methods run in turn each round (the
    order rotating), so that load on the machine falls on all of them alike."""
    names = list(methods)
    seen: dict[str, list] = {name: [] for name in names}
    for r in range(rounds):
        for name in names[r % len(names) :] + names[: r % len(names)]:
            seen[name].append(methods[name]())
    return {name: statistics.median(values) for name, values in seen.items()}


def child_cpu(cmd: list[str]) -> float:
    """CPU seconds (user + system) of one subprocess run to its end."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def cpu_of(func: Callable[[], object]) -> float:
    """CPU seconds of one call in this process."""
    start = time.process_time()
    func()
    return time.process_time() - start


def startup(quick: bool) -> None:
    fitkit = [sys.executable, "-m", "fitkit"]
    plan = ["plan", "--r", "6.8", "--l", "220u", "--c", "1n", "--sense-r", "47", "--noise", "1%"]
    commands = {
        "python -c pass": [sys.executable, "-c", "pass"],
        "fitkit --help": [*fitkit, "--help"],
        "fitkit --version": [*fitkit, "--version"],
        "fitkit inspect (a sample sweep)": [*fitkit, "inspect", str(SAMPLE)],
        "fitkit plan (the bound)": [*fitkit, *plan],
    }
    cpu = interleaved({k: lambda c=c: child_cpu(c) for k, c in commands.items()}, 3 if quick else 9)
    base = cpu.pop("python -c pass")
    header("Start-up: CPU time of a fresh process (median)", baseline="python -c pass")
    for name, seconds in cpu.items():
        row(name, f"{seconds:.3f} s", f"{base:.3f} s", f"{seconds / base:.1f}x",
            f"<= 0.4 s: {met(seconds <= 0.4)}")  # fmt: skip


def write_plain_csv(path: Path, points: int) -> None:
    """A plain CSV of a synthetic complex sweep: frequency, real and imaginary parts."""
    s = make_sweep(SETUPS["divider-terminal"], seed=7, points=points, span=(350e3, 700e3))
    table = np.column_stack([s.freq_hz, s.values.real, s.values.imag])
    np.savetxt(path, table, delimiter=",", fmt="%.9g", header="freq (Hz),re,im", comments="")


def reading(quick: bool) -> None:
    header("Reading a plain CSV: read_sweep (hash included) vs numpy.loadtxt", "read_sweep",
           "numpy.loadtxt")  # fmt: skip
    with tempfile.TemporaryDirectory() as tmp:
        for points, rounds in ((1001, 60 if quick else 400), (100_000, 3 if quick else 15)):
            path = Path(tmp) / f"sweep-{points}.csv"
            write_plain_csv(path, points)
            cpu = interleaved(
                {
                    "read_sweep": lambda p=path: cpu_of(lambda: read_sweep(p)),
                    "loadtxt": lambda p=path: cpu_of(
                        lambda: np.loadtxt(p, delimiter=",", skiprows=1)
                    ),
                },
                rounds,
            )
            ours, theirs = cpu["read_sweep"], cpu["loadtxt"]
            row(f"{points:,} rows", f"{ours * 1e3:.3f} ms", f"{theirs * 1e3:.3f} ms",
                f"{ours / theirs:.2f}x", f"<= 1.5x: {met(ours <= 1.5 * theirs)}")  # fmt: skip


def adopt_orphans() -> None:
    """Make this process the reaper of its orphaned descendants (Linux), so that the CPU
    time of a batch's fork server and workers, which outlive the batch's main process by
    a moment, is counted in this process's children's times once they are reaped."""
    import ctypes

    pr_set_child_subreaper = 36  # prctl(2)
    ctypes.CDLL(None, use_errno=True).prctl(pr_set_child_subreaper, 1, 0, 0, 0)


def reap_orphans(timeout: float = 30.0) -> None:
    """Wait for every adopted descendant to end (the fork server ends with its batch)."""
    end = time.perf_counter() + timeout
    while time.perf_counter() < end:
        try:
            pid, _ = os.waitpid(-1, os.WNOHANG)
        except ChildProcessError:
            return
        if pid == 0:
            time.sleep(0.02)


def batch_run(folder: Path, out: Path, workers: int, model: str) -> tuple[float, float]:
    """(CPU seconds of every process of the batch, wall seconds) of one ``fitkit batch``."""
    cmd = [sys.executable, "-m", "fitkit", "batch", str(folder), "--out", str(out),
           "--workers", str(workers), "--model", model]  # fmt: skip
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    wall = time.perf_counter() - start
    reap_orphans()
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), wall


def resident_mib() -> float:
    """This process's resident memory now (VmRSS, Linux)."""
    with open("/proc/self/status") as fh:
        return next(int(ln.split()[1]) for ln in fh if ln.startswith("VmRSS")) / 1024


def subset(folder: Path, count: int) -> Path:
    """A folder beside ``folder`` with links to its first ``count`` sweeps and its setup."""
    part = folder.with_name(f"{folder.name}-first-{count}")
    if part.exists():
        return part
    part.mkdir()
    for path in [*sorted(folder.glob("*.csv"))[:count], folder / "fitkit-setup.toml"]:
        (part / path.name).symlink_to(path)
    return part


def in_process(folder: Path, out: Path, model: str) -> dict:
    """A one-worker batch run in this process, warm (imports and first calls done on two
    sweeps): the CPU a sweep spends in ``fit_sweep`` and outside it (reading, set-up,
    records, results), of which in ``read_sweep``, and the resident memory after half
    and after all the sweeps."""
    import fitkit.workflow
    from fitkit.cli import main

    real = {name: getattr(fitkit.workflow, name) for name in ("fit_sweep", "read_sweep")}
    spent = dict.fromkeys(real, 0.0)

    def counting(name: str) -> Callable:
        def counted(*args, **kwargs):
            start = time.process_time()
            try:
                return real[name](*args, **kwargs)
            finally:
                spent[name] += time.process_time() - start

        return counted

    sweeps = sorted(folder.glob("*.csv"))
    half = subset(folder, len(sweeps) // 2)

    def run(where: Path) -> float:
        command = ["batch", str(where), "--out", str(out), "--workers", "1", "--model", model]
        return cpu_of(lambda: main([*command, "--force"], standalone_mode=False))

    for name in real:
        setattr(fitkit.workflow, name, counting(name))
    try:
        with contextlib.redirect_stdout(io.StringIO()):
            run(subset(folder, 2))
            run(half)
            rss_half = resident_mib()
            spent.update(dict.fromkeys(spent, 0.0))
            total = run(folder)
            rss_all = resident_mib()
    finally:
        for name, func in real.items():
            setattr(fitkit.workflow, name, func)
    n, fit = len(sweeps), spent["fit_sweep"]
    return {"fit": fit / n, "rest": (total - fit) / n, "read": spent["read_sweep"] / n,
            "rss": (rss_half, rss_all)}  # fmt: skip


def batch(quick: bool, count: int) -> None:
    count = 40 if quick else count
    goals = {"series": 400, "auto": 200}
    adopt_orphans()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "sweeps"
        folder.mkdir()
        write_sweeps(folder, count, 1001)
        header(f"Batch of {count} sweeps of 1,001 points, reading and writing included",
               "sweeps/CPU-s", "fit_sweep")  # fmt: skip
        print(f"  {'':<34} {'':>14} {'':>14} {'outside':>8}")
        per_sweep = {}
        for model, goal in goals.items():
            got = in_process(folder, Path(tmp) / f"{model}-in", model)
            per_sweep[model] = got["fit"] + got["rest"]
            row(f"--model {model}, one worker, warm", f"{1 / per_sweep[model]:.1f}",
                f"{got['fit'] * 1e3:.2f} ms", f"{got['rest'] / per_sweep[model]:.0%}",
                f">= {goal}/s/core: {met(1 / per_sweep[model] >= goal)}")  # fmt: skip
            growth = (got["rss"][1] - got["rss"][0]) * 2**20 / count
            print(f"  {'':<34} everything but fit_sweep: {got['rest'] * 1e3:.2f} ms a sweep "
                  f"(read_sweep {got['read'] * 1e3:.2f} ms); resident memory "
                  f"{got['rss'][0]:.1f} MiB, then {growth:+.0f} bytes a sweep over {count} "
                  "more")  # fmt: skip
        print("\n  the command, a fresh process (CPU of all its processes; wall on this machine"
              " as loaded)")  # fmt: skip
        for model in goals:
            for workers in (1, 2):
                cpu, wall = batch_run(folder, Path(tmp) / f"{model}-{workers}", workers, model)
                start_up = cpu - count * per_sweep[model]
                print(f"  --model {model:<7} {workers} worker(s): CPU {cpu:5.1f} s (start-up and "
                      f"pool {start_up:+.1f} s beyond the warm sweeps), wall {wall:5.1f} s = "
                      f"{count / wall:5.1f} sweeps/s")  # fmt: skip


def points(quick: bool) -> None:
    from fitkit.fitting import fit_sweep

    setup = SETUPS["divider-terminal"]
    sizes = (101, 1001, 10_001, 100_001)
    header("Fit cost against points (--model series, CPU, median)", "ms per fit", "per point")
    ms = []
    for n in sizes:
        sweep = make_sweep(setup, seed=3, points=n)
        repeats = max(3, (20 if quick else 60) * 1001 // n)
        fit_sweep(sweep, setup, topology="series")  # first call's set-up not counted
        ms.append(1e3 * statistics.median(
            cpu_of(lambda s=sweep: fit_sweep(s, setup, topology="series"))
            for _ in range(repeats)
        ))  # fmt: skip
        row(f"{n:,} points", f"{ms[-1]:.2f}", f"{ms[-1] / n * 1e3:.2f} us", "", "linear")
    # the fixed cost is what the line through the two small sizes leaves at 0 points (a
    # line through all four would let the large sizes' cache effects pull it down)
    slope = (ms[1] - ms[0]) / (sizes[1] - sizes[0])
    fixed = ms[0] - slope * sizes[0]
    row("fixed cost (101 to 1,001, at 0)", f"{fixed:.2f}", f"{slope * 1e3:.2f} us", "",
        f"<= 1 ms: {met(fixed <= 1.0)}")  # fmt: skip
    import fit_time

    floor = []
    for n in sizes[:2]:
        call = fit_time.lmfit_floor(make_sweep(setup, seed=3, points=n), setup)
        floor.append(1e3 * statistics.median(cpu_of(call) for _ in range(60)))
    slope = (floor[1] - floor[0]) / (sizes[1] - sizes[0])
    row("  the same for the lmfit floor", f"{floor[0] - slope * sizes[0]:.2f}",
        f"{slope * 1e3:.2f} us", "", "(one lmfit.minimize, no checks)")  # fmt: skip


def fit_ratios(quick: bool) -> None:
    import fit_time

    header("Fit against a bare least-squares solve (benchmarks/fit_time.py)", "fitkit", "bare")
    measure = getattr(fit_time, "measure", None)
    if measure is None:
        print("  fit_time.measure(points, model) is not there yet; run benchmarks/fit_time.py")
        return
    series = {}
    for n in (201, 1001):
        got = measure(n, "series")
        series[n] = got["fitkit_ms"]
        row(f"series, {n:,} points", f"{got['fitkit_ms']:.2f} ms", f"{got['bare_ms']:.2f} ms",
            f"{got['ratio']:.1f}x", f"<= 2.0x: {met(got['ratio'] <= 2.0)}")  # fmt: skip
        row("  lmfit floor: one lmfit.minimize", f"{got['lmfit_ms']:.2f} ms",
            f"{got['bare_ms']:.2f} ms", f"{got['lmfit_ratio']:.1f}x",
            "(no checks at all)")  # fmt: skip
    got = measure(1001, "auto")
    ratio = got["fitkit_ms"] / series[1001]
    row("auto, 1,001 points, vs series", f"{got['fitkit_ms']:.2f} ms", f"{series[1001]:.2f} ms",
        f"{ratio:.1f}x", f"<= 3x the series fit: {met(ratio <= 3.0)}")  # fmt: skip


def cpu_model() -> str:
    """The processor's name as Linux states it, else what :mod:`platform` knows."""
    with contextlib.suppress(OSError):
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                return line.split(":", 1)[1].strip()
    return platform.processor() or "processor unknown"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", default=",".join(PARTS), help="parts, comma-separated")
    parser.add_argument("--quick", action="store_true", help="fewer rounds and sweeps")
    parser.add_argument("--count", type=int, default=200, help="sweeps in the batch part")
    args = parser.parse_args()
    parts = args.only.split(",")
    unknown = set(parts) - set(PARTS)
    if unknown:
        parser.error(f"unknown part(s) {', '.join(sorted(unknown))}; choose from {PARTS}")
    print(f"{platform.node()}: {os.cpu_count()} cores, {cpu_model()}, "
          f"Python {platform.python_version()}, numpy {np.__version__}; "
          f"load average {os.getloadavg()[0]:.1f}")  # fmt: skip
    start = time.perf_counter()
    runs = {
        "startup": lambda: startup(args.quick),
        "reading": lambda: reading(args.quick),
        "batch": lambda: batch(args.quick, args.count),
        "points": lambda: points(args.quick),
        "fit": lambda: fit_ratios(args.quick),
    }
    for part in PARTS:
        if part in parts:
            runs[part]()
    print(f"\n{time.perf_counter() - start:.0f} s in all")


if __name__ == "__main__":
    main()
