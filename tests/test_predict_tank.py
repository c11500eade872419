"""Predictions for a tank (a coil with loss across C) in the chain it serves in."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.chain import Chain, rejection_db, response_db
from fitkit.errors import PredictionError
from fitkit.predict import Carrier, loaded_q, loss_limit, predict
from fitkit.tuning import tuning_c
from tests.spice import require_ngspice, spice_rejection_db, spice_value

L_H, R_OHM = 330e-6, 12.0
WANTED_HZ = 455e3  # a common AM intermediate frequency (common practice)
CHAIN = Chain("shunt", 20e3, 100e3, circuit="tank")


@pytest.mark.ngspice
def test_tank_across_the_line_matches_ngspice(tmp_path):
    # ngspice AC analysis of the retuned tank between a 20 kohm source and a 100 kohm load
    require_ngspice()
    c_f = tuning_c(WANTED_HZ, {"R": R_OHM, "L": L_H}, CHAIN)
    netlist = "\n".join(
        [
            "tank across the line",
            "V1 in 0 DC 0 AC 1",
            f"RS in out {spice_value(CHAIN.source_ohm)}",
            f"R1 out b {spice_value(R_OHM)}",
            f"L1 b 0 {spice_value(L_H)}",
            f"C1 out 0 {spice_value(c_f)}",
            f"RL out 0 {spice_value(CHAIN.load_ohm)}",
            ".ac lin 11 405e3 505e3",
        ]
    )
    freq, wanted, want_db = spice_rejection_db(netlist, "out", WANTED_HZ, tmp_path)
    values = {"R": R_OHM, "L": L_H, "C": c_f}
    got_db = np.array([rejection_db(f, wanted, values, CHAIN) for f in freq])
    assert np.abs(got_db - want_db).max() < 0.05
    assert want_db.max() > 3.0  # the offsets are really rejected


def test_loaded_q_matches_the_half_power_width():
    # the -3 dB width of the chain's own response is f0 / Q_L (resonance relations,
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 14, from memory)
    c_f = tuning_c(WANTED_HZ, {"R": R_OHM, "L": L_H}, CHAIN)
    values = {"R": R_OHM, "L": L_H, "C": c_f}
    f = np.linspace(400e3, 510e3, 200001)
    db = response_db(f, WANTED_HZ, values, CHAIN)
    inside = f[db > -3.0103]
    width = inside[-1] - inside[0]
    assert WANTED_HZ / width == pytest.approx(loaded_q(values, CHAIN, WANTED_HZ), rel=0.01)


def test_lighter_loading_gives_more_rejection():
    values = {"R": R_OHM, "L": L_H, "C": tuning_c(WANTED_HZ, {"R": R_OHM, "L": L_H}, CHAIN)}
    light = Chain("shunt", 200e3, 1e6, circuit="tank")
    assert rejection_db(465e3, WANTED_HZ, values, light) > rejection_db(
        465e3, WANTED_HZ, values, CHAIN
    )


def test_loss_limit_for_a_tank_and_its_remedy():
    values = {"R": R_OHM, "L": L_H, "C": tuning_c(WANTED_HZ, {"R": R_OHM, "L": L_H}, CHAIN)}
    limit = loss_limit(values, WANTED_HZ, [Carrier(910e3)], 20.0, CHAIN)
    # at the limit the rejection is exactly the requirement
    at_limit = dict(values, R=limit.r_max_ohm)
    assert rejection_db(910e3, WANTED_HZ, at_limit, CHAIN) == pytest.approx(20.0, abs=1e-6)
    with pytest.raises(PredictionError, match="load the tank more lightly"):
        loss_limit(values, WANTED_HZ, [Carrier(465e3)], 20.0, CHAIN)


def test_predict_reports_a_tank():
    p = predict({"R": R_OHM, "L": L_H, "C": 470e-12}, CHAIN, wanted_hz=WANTED_HZ)
    # near the tank's own resonance 1/(w^2 L), moved by its loss: C = L / (R^2 + w^2 L^2)
    # is where the tank's susceptance vanishes (parallel-circuit relations, from memory)
    w = 2 * math.pi * WANTED_HZ
    assert p.values["C"] == pytest.approx(L_H / (R_OHM**2 + (w * L_H) ** 2), rel=1e-4)
    assert p.extremum_hz == pytest.approx(WANTED_HZ, rel=1e-9)
    assert p.chain.circuit == "tank"
