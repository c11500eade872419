"""Are the uncertainties of an acquired sweep honest? Errors in units of stated errors.

Run: ``python benchmarks/acquire_calibration.py`` (a few minutes on 2 cores). For
each simulated circuit and seed, an adaptive sweep to Q = 0.2 % is taken from the
simulated bench through pyvisa, with and without equal noise (longer records for noisy
points), and every fitted value is compared with the simulator's circuit:
``z = (fit - truth) / stated standard uncertainty``. Honest uncertainties give an RMS of
z near 1 and about 68 % of runs with ``|z| < 1``.
"""

from __future__ import annotations

import math
import sys
import tempfile
from pathlib import Path

import numpy as np

from fitkit.instruments.bench_model import SCENARIOS, scenario_model
from fitkit.instruments.profile import load_profile
from fitkit.instruments.reading import ReadSettings
from fitkit.instruments.session import SweepRequest, take_sweep
from fitkit.instruments.simbench import SimulatedBench

SEEDS = range(1, 21)
NAMES = ("R", "L", "C", "f0")


def errors(name: str, seed: int, equal_noise: bool, folder: Path) -> list:
    sim = scenario_model(name, seed=seed)
    truth = {"R": sim.r_ohm, "L": sim.l_h, "C": sim.c_f}
    truth["f0"] = 1 / (2 * math.pi * math.sqrt(sim.l_h * sim.c_f))
    settings = ReadSettings(settle_periods=0, settle_min_s=0, equal_noise=equal_noise)
    request = SweepRequest(*SCENARIOS[name][2], topology=sim.topology, target_rel=0.002)
    with SimulatedBench(sim) as bench:
        taken = take_sweep(
            request,
            sim.setup,
            load_profile(),
            bench.addresses,
            folder / "s.csv",
            settings=settings,
        )
    return [(taken.fit[k].value - truth[k]) / taken.fit[k].stderr for k in NAMES]


def main() -> None:
    print(f"{len(SEEDS)} seeds per row; python {sys.version.split()[0]}")
    print("circuit  equal noise   RMS z (R, L, C, f0)          share |z| < 1")
    with tempfile.TemporaryDirectory() as tmp:
        for name in SCENARIOS:
            for equal in (False, True):
                z = np.array([errors(name, s, equal, Path(tmp)) for s in SEEDS])
                rms = np.sqrt(np.mean(z**2, axis=0))
                inside = np.mean(np.abs(z) < 1, axis=0)
                print(
                    f"{name:7s}  {'yes' if equal else 'no ':11s}  "
                    + " ".join(f"{v:4.2f}" for v in rms)
                    + "                  "
                    + " ".join(f"{v:4.2f}" for v in inside)
                )


if __name__ == "__main__":
    main()
