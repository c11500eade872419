"""The retuned circuit's rejection against an ngspice AC analysis of the same netlist."""

from __future__ import annotations

import numpy as np
import pytest

from fitkit.chain import Chain, rejection_db
from fitkit.predict import tuning_c
from tests.spice import spice_rejection_db, spice_value

L_H, R_OHM = 220e-6, 6.8
WANTED_HZ = 999e3
# offsets of one to four 9 kHz channels either side, on one linear grid (GE75 raster)
GRID = ".ac lin 9 963e3 1035e3"


def max_difference_db(netlist: str, chain: Chain, c_f: float, tmp_path) -> tuple:
    """Largest |fitkit - ngspice| rejection over the grid, and ngspice's rejections."""
    freq, wanted, want_db = spice_rejection_db(netlist, "out", WANTED_HZ, tmp_path)
    values = {"R": R_OHM, "L": L_H, "C": c_f}
    got_db = np.array([rejection_db(f, wanted, values, chain) for f in freq])
    return float(np.abs(got_db - want_db).max()), want_db


@pytest.mark.ngspice
def test_series_circuit_between_source_and_load(tmp_path):
    # ngspice AC analysis (an independent circuit simulator) of the retuned series circuit
    chain = Chain("series", 10.0, 50.0, 100e-12)
    c_f = tuning_c(WANTED_HZ, L_H, chain)
    netlist = "\n".join(
        [
            "retuned series circuit between source and load",
            "V1 in 0 DC 0 AC 1",
            f"RS in a {spice_value(chain.source_ohm)}",
            f"R1 a b {spice_value(R_OHM)}",
            f"L1 b c {spice_value(L_H)}",
            f"C1 c out {spice_value(c_f)}",
            f"RL out 0 {spice_value(chain.load_ohm)}",
            f"CL out 0 {spice_value(chain.load_f)}",
            GRID,
        ]
    )
    worst, want_db = max_difference_db(netlist, chain, c_f, tmp_path)
    assert worst < 0.05
    assert want_db.max() > 3.0  # the offsets are really rejected, not a flat response


@pytest.mark.ngspice
def test_shunt_trap_across_the_line(tmp_path):
    # ngspice AC analysis of a series R-L-C across the line, tuned on the upper neighbour
    chain = Chain("shunt", 600.0, 10e3)
    c_f = tuning_c(1008e3, L_H, chain)
    netlist = "\n".join(
        [
            "trap across the line",
            "V1 in 0 DC 0 AC 1",
            f"RS in out {spice_value(chain.source_ohm)}",
            f"R1 out b {spice_value(R_OHM)}",
            f"L1 b c {spice_value(L_H)}",
            f"C1 c 0 {spice_value(c_f)}",
            f"RL out 0 {spice_value(chain.load_ohm)}",
            GRID,
        ]
    )
    worst, want_db = max_difference_db(netlist, chain, c_f, tmp_path)
    assert worst < 0.05
    assert want_db.max() > 10.0  # the trap takes the upper neighbour down
