"""Accuracy and speed of fitkit against the Cramer-Rao bound, beside two common methods.

Run: ``python benchmarks/accuracy.py`` (full grid, ~10 minutes on 2 cores) or
``python benchmarks/accuracy.py --quick`` (under a minute). Prints Markdown.

Every sweep is a divider ratio (sense resistor 50 ohm, R = 50 ohm, so the peak ratio is
0.5) of a series circuit at 1 MHz, 201 linear points over +-span loaded bandwidths
(off-centre: the centre half a span above resonance), with seeded Gaussian noise of
sigma = peak / 10^(SNR/20): on the real and on the imaginary part for complex data, on
the magnitude for magnitude-only data (the noise model the bound is computed for). Three
methods read each sweep:

- fitkit: ``fit_sweep`` with the noise estimated from the residuals;
- half-power reading: the peak sample's frequency, and the loaded Q as that frequency
  over the distance between the linearly interpolated -3 dB crossings (no error bar);
- curve_fit: ``scipy.optimize.curve_fit`` of ``A / sqrt(1 + Q^2 (f/f0 - f0/f)^2)`` to the
  magnitude from a generic start (A the largest reading, f0 where it is, Q = 10).

Per method and cell: RMS error of f0 and loaded Q over the bound (``fitkit.plan``) for
the data at hand, bias over the bound, 1-sigma coverage (share of runs whose reported
interval holds the truth), "ok" (share that returned values within 10 bounds of the
truth: no failure, no wrong minimum), and the median time per fit. Run ``r`` of cell
``c`` draws its noise from ``numpy.random.default_rng([SEED, c, r])``.
"""

from __future__ import annotations

import argparse
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # one core per worker process
os.environ.setdefault("OMP_NUM_THREADS", "1")

import platform  # noqa: E402
import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from concurrent.futures import ProcessPoolExecutor  # noqa: E402
from dataclasses import dataclass  # noqa: E402
from itertools import product  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
from scipy.optimize import OptimizeWarning, curve_fit, least_squares  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from fitkit.circuits import TWO_PI, series_rlc  # noqa: E402
from fitkit.errors import FitkitError  # noqa: E402
from fitkit.fitting import fit_sweep  # noqa: E402
from fitkit.noise import Noise  # noqa: E402
from fitkit.plan import SweepShape, cramer_rao  # noqa: E402
from fitkit.setups import Setup  # noqa: E402
from fitkit.sweep import Sweep  # noqa: E402

SEED = 6
SETUP = Setup("divider", "ratio", sense_ohm=50.0)
F0_HZ, R_OHM, POINTS = 1e6, 50.0, 201
METHODS = ("fitkit", "half-power", "curve_fit")
OK_BOUNDS = 10.0
GRIDS = {  # loaded Q, peak SNR dB, half-span in bandwidths, runs per cell
    "full": ((2, 10, 50, 500), (15, 20, 30, 45, 60), (1, 3, 10, 20), 200),
    "quick": ((2, 50, 500), (20, 40), (1, 5), 30),
}


@dataclass(frozen=True)
class Cell:
    q_loaded: float
    snr_db: float
    span_bw: float
    off_centre: bool
    complex_data: bool

    def circuit(self) -> tuple:
        w0, loop = TWO_PI * F0_HZ, R_OHM + SETUP.external_ohm
        return R_OHM, self.q_loaded * loop / w0, 1.0 / (w0 * self.q_loaded * loop)

    def freq_hz(self, points: int = POINTS) -> np.ndarray:
        offset = self.span_bw / 2 if self.off_centre else 0.0
        return SweepShape(self.span_bw, points, "linear", offset).frequencies(F0_HZ, self.q_loaded)

    def label(self) -> str:
        """Four table columns: Q, SNR, span and centring, data form."""
        where = "off" if self.off_centre else "mid"
        form = "complex" if self.complex_data else "magnitude"
        return f"Q {self.q_loaded:g} | {self.snr_db:g} dB | +-{self.span_bw:g} {where} | {form}"


def noisy_sweep(cell: Cell, rng: np.random.Generator, points: int = POINTS) -> tuple:
    """The sweep for one run, and its noise sigma."""
    f = cell.freq_hz(points)
    truth = SETUP.response(series_rlc(f, *cell.circuit()), f)
    sigma = np.abs(truth).max() / 10 ** (cell.snr_db / 20)
    if cell.complex_data:
        data = truth + sigma * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    else:
        data = np.abs(truth) + sigma * rng.normal(size=f.size)
    return Sweep(f, data, "ratio"), sigma


def by_fitkit(sweep: Sweep) -> tuple:
    fit = fit_sweep(sweep, SETUP)
    f0, ql = fit["f0"], fit["Q_loaded"]
    return f0.value, ql.value, f0.stderr, ql.stderr


def by_half_power(sweep: Sweep) -> tuple:
    """The bench technician's reading: peak, then the interpolated -3 dB crossings."""
    f, mag = sweep.freq_hz, np.abs(sweep.values)
    i = int(np.argmax(mag))
    level = mag[i] / np.sqrt(2.0)
    below = np.flatnonzero(mag[:i] < level)
    above = i + np.flatnonzero(mag[i:] < level)
    if below.size == 0 or above.size == 0:
        raise ValueError("a -3 dB crossing lies outside the sweep")
    lo, hi = below[-1], above[0]
    f_lo = np.interp(level, [mag[lo], mag[lo + 1]], [f[lo], f[lo + 1]])
    f_hi = np.interp(level, [mag[hi], mag[hi - 1]], [f[hi], f[hi - 1]])
    return f[i], f[i] / (f_hi - f_lo), None, None


def _magnitude(f, a, f0, q):
    return a / np.sqrt(1.0 + q**2 * (f / f0 - f0 / f) ** 2)


def by_curve_fit(sweep: Sweep) -> tuple:
    f, mag = sweep.freq_hz, np.abs(sweep.values)
    i = int(np.argmax(mag))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OptimizeWarning)
        p, cov = curve_fit(_magnitude, f, mag, p0=[mag[i], f[i], 10.0])
    err = np.sqrt(np.diag(cov))
    return p[1], abs(p[2]), err[1], err[2]


READERS = {"fitkit": by_fitkit, "half-power": by_half_power, "curve_fit": by_curve_fit}


def run_cell(job: tuple) -> dict:
    """All runs of one cell, every method on the same sweeps."""
    index, cell, runs = job
    r, l_h, c_f = cell.circuit()
    errors = {m: [] for m in METHODS}
    covered = {m: [] for m in METHODS}
    times = {m: [] for m in METHODS}
    failures = {m: [] for m in METHODS}
    bound = None
    for run in range(runs):
        sweep, sigma = noisy_sweep(cell, np.random.default_rng([SEED, index, run]))
        if bound is None:
            b = cramer_rao(
                SETUP,
                sweep.freq_hz,
                r,
                l_h,
                c_f,
                Noise("additive", sigma),
                complex_data=cell.complex_data,
            )
            bound = np.array([b["f0"].stderr, b["Q_loaded"].stderr])
        for method in METHODS:
            t = time.perf_counter()
            try:
                f0, ql, s_f0, s_ql = READERS[method](sweep)
            except (FitkitError, ValueError, RuntimeError) as exc:
                failures[method].append((run, f"{type(exc).__name__}: {exc}".splitlines()[0]))
                continue
            finally:
                times[method].append(time.perf_counter() - t)
            err = np.array([f0 - F0_HZ, ql - cell.q_loaded]) / bound
            errors[method].append(err)
            if not np.all(np.abs(err) <= OK_BOUNDS):
                failures[method].append((run, f"off by {err[0]:+.3g}, {err[1]:+.3g} bounds"))
            if s_f0 is not None:
                covered[method].append(np.abs(err) * bound <= np.array([s_f0, s_ql]))
    return {
        "index": index,
        "cell": cell,
        "runs": runs,
        "bound": bound,
        "errors": errors,
        "covered": covered,
        "times": times,
        "failures": failures,
    }


def cell_stats(res: dict, method: str) -> dict:
    e = np.array(res["errors"][method]).reshape(-1, 2)
    c = np.array(res["covered"][method]).reshape(-1, 2)
    return {
        "rms": np.sqrt(np.mean(e**2, axis=0)) if e.size else np.full(2, np.nan),
        "bias": np.mean(e, axis=0) if e.size else np.full(2, np.nan),
        "coverage": np.mean(c, axis=0) if c.size else None,
        "ok": 1.0 - len(res["failures"][method]) / res["runs"],
        "ms": 1e3 * statistics.median(res["times"][method]),
    }


def speed_check(repeats: int = 41) -> tuple:
    """Median ms: fitkit (uncertainties included) and a bare least_squares solve of the
    same 1,001-point complex sweep (Q 50, 40 dB, +-3 bandwidths), in ln f0, ln QL, ln loop
    from the truth."""
    cell = Cell(50, 40, 3, False, True)
    sweep, _ = noisy_sweep(cell, np.random.default_rng([SEED, 10**6]), points=1001)
    f, d = sweep.freq_hz, sweep.values
    ext = SETUP.external_ohm

    def resid(p):
        w0, ql, loop = TWO_PI * np.exp(p[0]), np.exp(p[1]), np.exp(p[2])
        z = series_rlc(f, loop - ext, ql * loop / w0, 1.0 / (w0 * ql * loop))
        m = SETUP.response(z, f) - d
        return np.concatenate([m.real, m.imag])

    start = np.log([F0_HZ, 50.0, R_OHM + ext])
    out = []
    for func in (lambda: fit_sweep(sweep, SETUP), lambda: least_squares(resid, start, method="lm")):
        func()  # warm
        times = []
        for _ in range(repeats):
            t = time.perf_counter()
            func()
            times.append(time.perf_counter() - t)
        out.append(1e3 * statistics.median(times))
    return tuple(out)


def _fmt(x: float) -> str:
    return "-" if x is None or not np.isfinite(x) else f"{x:.2f}"


def _cov(c) -> str:
    return "-" if c is None else f"{100 * c[0]:.0f}/{100 * c[1]:.0f}"


def print_report(results: list, speed: tuple, command: str, seconds: float) -> None:
    cpu = next(
        (
            ln.split(":", 1)[1].strip()
            for ln in open("/proc/cpuinfo")
            if ln.startswith("model name")
        ),
        platform.processor(),
    )
    print(f"Command: `{command}` ({seconds:.0f} s wall)\n")
    print(
        f"Machine: {os.cpu_count()} cores ({cpu}), Python {platform.python_version()}, "
        f"numpy {np.__version__}\n"
    )
    fk, bare = speed
    print("## Speed (1,001-point complex sweep, median)\n")
    print("| fitkit fit, uncertainties included | bare least_squares | ratio | target |")
    print("|---|---|---|---|")
    print(
        f"| {fk:.2f} ms | {bare:.2f} ms | {fk / bare:.1f}x | <= 2x and <= 5 ms: "
        f"{'met' if fk <= 2 * bare and fk <= 5 else 'MISSED'} |\n"
    )
    print("## Summary over cells with SNR >= 20 dB (all spans are >= +-1 bandwidth)\n")
    print(
        "| method | data | RMS/bound f0 (pooled, worst) | RMS/bound Q (pooled, worst) "
        "| coverage f0/Q % (range) | ok % | ms/fit |"
    )
    print("|---|---|---|---|---|---|---|")
    for method, form in product(METHODS, (True, False)):
        sel = [r for r in results if r["cell"].snr_db >= 20 and r["cell"].complex_data == form]
        st = [cell_stats(r, method) for r in sel]
        rms = np.array([s["rms"] for s in st])
        pooled = np.sqrt(np.nanmean(rms**2, axis=0))
        worst = np.nanmax(rms, axis=0)
        covs = np.array([s["coverage"] for s in st if s["coverage"] is not None])
        cov = (
            "-"
            if covs.size == 0
            else (
                f"{100 * covs[:, 0].mean():.1f}/{100 * covs[:, 1].mean():.1f} "
                f"({100 * covs.min():.0f}-{100 * covs.max():.0f})"
            )
        )
        ok = np.mean([s["ok"] for s in st])
        ms = statistics.median([s["ms"] for s in st])
        print(
            f"| {method} | {'complex' if form else 'magnitude'} | {pooled[0]:.3f}, "
            f"{worst[0]:.2f} | {pooled[1]:.3f}, {worst[1]:.2f} | {cov} | {100 * ok:.2f} "
            f"| {ms:.2f} |"
        )
    print("\n## Every cell\n")
    print("RMS/bound and bias/bound as f0, Q; coverage f0/Q %; ok % (within 10 bounds).\n")
    print(
        "| # | Q | SNR | span | data | fitkit RMS | fitkit bias | fitkit cov | fitkit ok "
        "| half-power RMS "
        "| half-power ok | curve_fit RMS | curve_fit cov | curve_fit ok |"
    )
    print("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for r in results:
        f, h, c = (cell_stats(r, m) for m in METHODS)
        print(
            f"| {r['index']} | {r['cell'].label()} | {_fmt(f['rms'][0])}, {_fmt(f['rms'][1])} "
            f"| {_fmt(f['bias'][0])}, {_fmt(f['bias'][1])} | {_cov(f['coverage'])} "
            f"| {100 * f['ok']:.1f} | {_fmt(h['rms'][0])}, {_fmt(h['rms'][1])} "
            f"| {100 * h['ok']:.1f} | {_fmt(c['rms'][0])}, {_fmt(c['rms'][1])} "
            f"| {_cov(c['coverage'])} | {100 * c['ok']:.1f} |"
        )
    print("\n## fitkit runs that failed or ended off the truth (cell, run: what)\n")
    shown = [(r["index"], run, what) for r in results for run, what in r["failures"]["fitkit"]]
    for index, run, what in shown[:40]:
        print(f"- cell {index}, run {run}: {what}")
    if not shown:
        print("- none")
    elif len(shown) > 40:
        print(f"- ... {len(shown) - 40} more")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="A small grid, under a minute.")
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    args = parser.parse_args()
    qs, snrs, spans, runs = GRIDS["quick" if args.quick else "full"]
    cells = [
        Cell(q, s, k, off, cx)
        for q, s, k, off, cx in product(qs, snrs, spans, (False, True), (True, False))
    ]
    began = time.perf_counter()
    speed = speed_check()
    with ProcessPoolExecutor(max_workers=args.workers) as pool:
        results = list(pool.map(run_cell, [(i, c, runs) for i, c in enumerate(cells)]))
    command = "python benchmarks/accuracy.py" + (" --quick" if args.quick else "")
    print_report(results, speed, command, time.perf_counter() - began)


if __name__ == "__main__":
    main()
