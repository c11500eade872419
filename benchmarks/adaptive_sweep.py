"""Points needed to reach a target: the adaptive sweep beside a linear sweep of the same span.

Run: ``python benchmarks/adaptive_sweep.py`` (about a minute on 2 cores). Both sweeps are
taken from the simulated bench through pyvisa and pyvisa-py, each point read the same way
(sine fits of 400-sample records, 10 mV noise per sample); the circuit is fitted with
``fit_sweep``, each point weighted by its own sigma from the sine fits.

- adaptive: ``take_sweep`` (21-point geometric coarse pass, then 4 points a round where
  the Fisher information is largest) until the fit's relative standard uncertainty of Q
  reaches the target;
- linear: N points spaced evenly over the same span, N doubled from 25 until the fit of
  one sweep reaches the same target. Doubling overshoots, so the points a linear sweep
  needs are also estimated from the last one as ``N (u / target)^2`` (the uncertainty
  falls as one over the square root of the points for a fixed spacing), and the ratio
  uses that estimate.

Printed per scenario and seed: the points each needed and their ratio, and the same in
records of the default length (the adaptive sweep reads noisy points with longer
records, so that all points are about equally noisy; the linear sweep's points are all
of the default length).
"""

from __future__ import annotations

import statistics
import sys
import tempfile
from pathlib import Path

import numpy as np

from fitkit.fitting import fit_sweep
from fitkit.instruments.bench_model import SCENARIOS, scenario_model
from fitkit.instruments.powered import powered
from fitkit.instruments.profile import load_profile
from fitkit.instruments.reading import ReadSettings
from fitkit.instruments.session import SweepRequest, take_sweep
from fitkit.instruments.simbench import SimulatedBench
from fitkit.sweep import Sweep

TARGET = 0.002  # Q to 0.2 %
SEEDS = (1, 2, 3)
SETTINGS = ReadSettings(settle_periods=0, settle_min_s=0, record_points=400)


def adaptive(model, span, folder: Path) -> tuple:
    request = SweepRequest(
        *span, topology=model.topology, target="Q", target_rel=TARGET, max_points=2000
    )
    with SimulatedBench(model) as bench:
        taken = take_sweep(
            request,
            model.setup,
            load_profile(),
            bench.addresses,
            folder / "adaptive.csv",
            settings=SETTINGS,
        )
    q = taken.fit["Q"]
    records = sum(pt.length for pt in taken.points)
    return len(taken.points), records, q.stderr / q.value


def linear(model, span) -> tuple:
    with SimulatedBench(model) as bench:
        with powered(load_profile(), bench.addresses, 1.0, settings=SETTINGS) as reader:
            n = 25
            while True:
                f = np.linspace(*span, n)
                points = [reader.read(x) for x in f]
                values = np.array([pt.ratio for pt in points])
                sigma = np.array([pt.sigma for pt in points])  # weighted as acquire's fit is
                sweep = Sweep(f, values, "ratio", sigma=sigma)
                fit = fit_sweep(sweep, model.setup, topology=model.topology)
                rel = fit["Q"].stderr / fit["Q"].value
                if rel <= TARGET or n >= 3200:
                    return n, rel
                n *= 2


def main() -> None:
    print(f"target: Q to {TARGET:.1%}; python {sys.version.split()[0]}")
    ratios = []
    with tempfile.TemporaryDirectory() as tmp:
        for name, (_, _, span) in SCENARIOS.items():
            for seed in SEEDS:
                model = scenario_model(name, seed=seed)
                n_a, rec_a, rel_a = adaptive(model, span, Path(tmp))
                n_l, rel_l = linear(scenario_model(name, seed=seed), span)
                need = n_l * (rel_l / TARGET) ** 2
                ratios.append((need / n_a, need / rec_a))
                print(
                    f"{name:6s} {span[0] / 1e3:g}k-{span[1] / 1e3:g}k seed {seed}: "
                    f"adaptive {n_a:3d} points, {rec_a:5.1f} records "
                    f"({rel_a:.3%}); linear {n_l:4d} points ({rel_l:.3%}), needs ~{need:.0f}; "
                    f"ratio {need / n_a:.1f} in points, {need / rec_a:.1f} in records"
                )
    print(
        f"median ratio linear/adaptive: {statistics.median(r[0] for r in ratios):.1f} in "
        f"points, {statistics.median(r[1] for r in ratios):.1f} in records"
    )


if __name__ == "__main__":
    main()
