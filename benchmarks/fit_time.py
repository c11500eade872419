"""How long one fit takes, against the solver's floor measured in the same run.

Run: ``python benchmarks/fit_time.py [--repeats N]``. For each setup and size it prints
the CPU time of ``fit_sweep`` (uncertainties, checks and all) beside a bare
``scipy.optimize.least_squares`` solve of the same series circuit from the same
closed-form start with an analytic Jacobian, the two interleaved so that a busy machine
slows both alike; the ratio is the figure the speed targets are stated in. ``auto`` is
reported against the series fit of the same sweep. The "lmfit floor" is one
``lmfit.minimize`` of the same problem from the same start with fitkit's residual and
closed-form Jacobian and nothing else: what any fit with lmfit as its engine pays.

``measure(points, model)`` is the function other benchmark scripts call.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from fitkit.circuits import TWO_PI, series_rlc  # noqa: E402
from fitkit.estimate import estimate_start  # noqa: E402
from fitkit.fitting import fit_sweep  # noqa: E402
from fitkit.noise import Noise  # noqa: E402
from fitkit.problem import UNIT_NOISE, FitProblem  # noqa: E402
from fitkit.topologies import SERIES  # noqa: E402
from tests.synthetic import SETUPS, make_sweep  # noqa: E402

DEFAULT_SETUP = "divider-terminal"


def bare_solve(sweep, setup):
    """Plain Levenberg-Marquardt on ln R, ln L, ln C with an analytic Jacobian, from the
    closed-form start fitkit uses: the floor any fit of this sweep must pay."""
    f, d = sweep.freq_hz, sweep.values
    w = TWO_PI * f
    a, b, c, dd = setup.coefficients(f)
    start = estimate_start(sweep, setup, SERIES)
    w0 = TWO_PI * start.f0_hz
    loop = start.scale_ohm
    x0 = np.log(
        [max(loop - setup.external_ohm, 1e-3), start.q * loop / w0, 1 / (w0 * start.q * loop)]
    )

    def model(x):
        r, l_h, c_f = np.exp(x)
        z = series_rlc(f, r, l_h, c_f)
        den = c * z + dd
        return z, (a * z + b) / den, (a * dd - b * c) / den**2

    def resid(x):
        m = model(x)[1] - d
        return np.concatenate([m.real, m.imag])

    def jac(x):
        r, l_h, c_f = np.exp(x)
        _, _, slope = model(x)
        cols = slope[:, None] * np.column_stack([r + 0 * w, 1j * w * l_h, 1j / (w * c_f)])
        return np.concatenate([cols.real, cols.imag])

    return least_squares(resid, x0, jac=jac, method="lm")


def lmfit_floor(sweep, setup):
    """One ``lmfit.minimize`` of the same series circuit from the same closed-form start,
    with fitkit's own residual and closed-form Jacobian and nothing else (no checks, no
    outlier step, no propagation): the least a fit with lmfit as its engine can cost.
    Returns the call to time: the closed-form start, as :func:`bare_solve` counts it,
    and the lmfit pass (the start's check of what the sweep determines is left out)."""
    problem = FitProblem(sweep, setup, SERIES, {})
    values, free, _ = problem.start_values(estimate_start(sweep, setup, SERIES))
    unit = Noise("additive", UNIT_NOISE, UNIT_NOISE)
    used = np.arange(sweep.points)

    def call():
        estimate_start(sweep, setup, SERIES)
        return problem.lmfit_pass(values, free, used, unit, bounded=False)

    return call


def lmfit_overhead_ms(points: int, repeats: int = 30) -> tuple:
    """lmfit's own cost per call, apart from the model: ``lmfit.minimize`` and a bare
    ``least_squares`` on a three-parameter straight-line problem of the same size with
    its Jacobian given (both converge in one step), CPU ms, interleaved."""
    import lmfit

    x = np.linspace(0.0, 1.0, 2 * points)
    design = np.column_stack([np.ones_like(x), x, x**2])
    target = design @ np.array([0.5, 0.3, 0.2])
    params = lmfit.Parameters()
    for name in "abc":
        params.add(name, value=1.0, min=-10.0, max=10.0)

    def resid(p):
        return design @ np.array([p["a"].value, p["b"].value, p["c"].value]) - target

    runs = {"lmfit": [], "bare": []}
    for _ in range(repeats):
        runs["lmfit"].append(
            _cpu_ms(
                lambda: lmfit.minimize(
                    resid, params, method="leastsq", Dfun=lambda p: design.copy()
                )
            )
        )
        runs["bare"].append(
            _cpu_ms(
                lambda: least_squares(
                    lambda v: design @ v - target, np.ones(3), jac=lambda v: design, method="lm"
                )
            )
        )
    return statistics.median(runs["lmfit"]), statistics.median(runs["bare"])


def _cpu_ms(func) -> float:
    t = time.process_time()
    func()
    return 1e3 * (time.process_time() - t)


def measure(points: int = 1001, model: str = "series", repeats: int = 30, setup_name=DEFAULT_SETUP):
    """Median CPU milliseconds of ``fit_sweep`` and of the bare solve, interleaved.

    Returns a dict with ``fitkit_ms``, ``bare_ms`` and ``ratio`` (fitkit / bare),
    ``lmfit_ms`` and ``lmfit_ratio`` (:func:`lmfit_floor`, and it over bare); for a
    model other than ``series`` also ``series_ms`` and ``ratio_to_series``.
    """
    setup = SETUPS[setup_name]
    sweep = make_sweep(setup, seed=1, points=points)
    runs = {"fitkit": [], "bare": [], "lmfit": [], "series": []}
    floor = lmfit_floor(sweep, setup)
    for _ in range(repeats):
        runs["bare"].append(_cpu_ms(lambda: bare_solve(sweep, setup)))
        runs["lmfit"].append(_cpu_ms(floor))
        runs["fitkit"].append(_cpu_ms(lambda: fit_sweep(sweep, setup, topology=model)))
        if model != "series":
            runs["series"].append(_cpu_ms(lambda: fit_sweep(sweep, setup, topology="series")))
    out = {k: statistics.median(v) for k, v in runs.items() if v}
    result = {
        "fitkit_ms": out["fitkit"],
        "bare_ms": out["bare"],
        "ratio": out["fitkit"] / out["bare"],
        "lmfit_ms": out["lmfit"],
        "lmfit_ratio": out["lmfit"] / out["bare"],
    }
    if model != "series":
        result["series_ms"] = out["series"]
        result["ratio_to_series"] = out["fitkit"] / out["series"]
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=30)
    parser.add_argument("--setups", default="all", help="comma-separated, or all")
    args = parser.parse_args()
    names = sorted(SETUPS) if args.setups == "all" else args.setups.split(",")
    print("CPU time, medians of interleaved runs; bare = least_squares, analytic Jacobian")
    print(
        f"{'setup':<22} {'points':>6} {'model':>7} {'fitkit ms':>10} {'bare ms':>8} "
        f"{'ratio':>6} {'vs series':>9} {'lmfit floor':>12}"
    )
    for name in names:
        for points in (201, 1001):
            for model in ("series", "auto"):
                m = measure(points, model, args.repeats, name)
                vs = f"{m['ratio_to_series']:>9.1f}" if "ratio_to_series" in m else f"{'':>9}"
                print(
                    f"{name:<22} {points:>6} {model:>7} {m['fitkit_ms']:>10.2f} "
                    f"{m['bare_ms']:>8.2f} {m['ratio']:>6.1f} {vs} "
                    f"{m['lmfit_ms']:>6.2f} {m['lmfit_ratio']:>4.1f}x",
                    flush=True,
                )

    for points in (201, 1001):
        with_lmfit, bare = lmfit_overhead_ms(points, args.repeats)
        print(
            f"lmfit.minimize on a linear problem of {points} points: {with_lmfit:.2f} ms, "
            f"least_squares {bare:.2f} ms: lmfit's own cost per call {with_lmfit - bare:.2f} ms"
        )


if __name__ == "__main__":
    main()
