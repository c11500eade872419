"""Predictions: the chain response against closed forms, retune, band cover, loss limit."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.chain import Chain, chain_from_setup, rejection_db, response_db
from fitkit.circuits import series_rlc
from fitkit.errors import PredictionError
from fitkit.predict import Carrier, loaded_q, loss_limit, needed_q, predict
from fitkit.setups import Setup
from fitkit.tuning import band_cover, tuning_c

TWO_PI = 2.0 * math.pi


def tuned(f0_hz: float, l_h: float, r_ohm: float = 0.0) -> dict:
    return {"R": r_ohm, "L": l_h, "C": 1.0 / ((TWO_PI * f0_hz) ** 2 * l_h)}


def loop_for_q(q: float, f0_hz: float, l_h: float) -> float:
    return TWO_PI * f0_hz * l_h / q


def closed_form_db(q: float, f_hz, f0_hz: float):
    # single tuned circuit at equal drive: 10 log10(1 + Q^2 y^2), y = f/f0 - f0/f
    y = f_hz / f0_hz - f0_hz / f_hz
    return 10.0 * np.log10(1.0 + q**2 * y**2)


def test_series_chain_matches_the_textbook_power_ratio():
    # Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 14 (from memory): series
    # R-L-C in a resistive loop, loaded Q = w0 L / (R + Rsource + Rload)
    f0, l_h = 700e3, 150e-6
    values = tuned(f0, l_h, r_ohm=4.0)
    chain = Chain("series", 25.0, 75.0)
    q_loaded = TWO_PI * f0 * l_h / (4.0 + 25.0 + 75.0)
    for f in (350e3, 690e3, 701e3, 720e3, 1.4e6, 5e6):
        got = rejection_db(f, f0, values, chain)
        assert got == pytest.approx(closed_form_db(q_loaded, f, f0), rel=1e-9, abs=1e-12)


def test_q_100_at_ten_khz_off_one_megahertz_gives_6_96_db():
    # Alexander & Sadiku ch. 14 relations (from memory): 1000 kHz, +10 kHz, Q = 100 -> 6.96 dB
    l_h = 100e-6
    chain = Chain("series", 0.0, loop_for_q(100.0, 1e6, l_h))
    assert rejection_db(1010e3, 1e6, tuned(1e6, l_h), chain) == pytest.approx(6.96, abs=0.005)


def test_twenty_db_at_ten_khz_needs_q_of_about_500():
    # Alexander & Sadiku ch. 14 relations (from memory): 20 dB at +10 kHz needs Q ~= 500
    assert needed_q(100.0, 1010e3, 1e6) == pytest.approx(500.0, rel=0.002)
    l_h = 1e-3  # w0 L = 6.28 kohm: Q up to 1257 with 5 ohm in the loop
    chain = Chain("series", 0.0, 5.0)
    limit = loss_limit(tuned(1e6, l_h), 1e6, [Carrier(1010e3)], 20.0, chain)
    assert limit.q_loaded_min == pytest.approx(500.0, rel=0.002)
    assert limit.r_max_ohm + 5.0 == pytest.approx(TWO_PI * 1e6 * l_h / 500.0, rel=0.002)


@pytest.mark.parametrize(("f0_hz", "ratio"), [(1000e3, 138.6), (25e6, 7.22)])
def test_superheterodyne_image_rejection(f0_hz, ratio):
    # Kennedy & Davis, Electronic Communication Systems, ch. 6 (from memory): loaded Q = 100,
    # IF 455 kHz, oscillator above: image at f0 + 910 kHz; 1000 kHz -> 138.6 (42.8 dB),
    # 25 MHz -> 7.22 (the book's ratio is a voltage ratio)
    l_h = 10e-6
    chain = Chain("series", 0.0, loop_for_q(100.0, f0_hz, l_h))
    got_db = rejection_db(f0_hz + 2 * 455e3, f0_hz, tuned(f0_hz, l_h), chain)
    assert 10 ** (got_db / 20.0) == pytest.approx(ratio, rel=0.002)
    if f0_hz == 1000e3:
        assert got_db == pytest.approx(42.8, abs=0.05)


def test_shunt_trap_matches_a_direct_complex_calculation():
    # the divider rule with complex impedances (numpy complex, an independent route):
    # V = Vs (Zc || Zl) / (Rs + Zc || Zl)
    values = {"R": 3.0, "L": 47e-6, "C": 330e-12}
    rs, rl, cl = 75.0, 600.0, 20e-12
    chain = Chain("shunt", rs, rl, cl)

    def gain(f):
        zl = 1.0 / (1.0 / rl + 1j * TWO_PI * f * cl)
        zc = series_rlc(np.array([f]), values["R"], values["L"], values["C"])[0]
        zp = zc * zl / (zc + zl)
        return abs(zp / (rs + zp)) ** 2

    wanted = 1.5e6
    for f in (0.9e6, 1.2e6, 1.28e6, 1.3e6, 2e6):
        want_db = 10 * math.log10(gain(wanted) / gain(f))
        assert rejection_db(f, wanted, values, chain) == pytest.approx(want_db, rel=1e-9)


def test_retune_in_a_resistive_loop_is_the_series_resonance():
    # series resonance C = 1/(w^2 L) (Alexander & Sadiku ch. 14, from memory): in a purely
    # resistive loop the chain's peak is the circuit's own resonance, whatever R
    l_h, f = 220e-6, 999e3
    for r_ohm in (0.0, 6.8, 300.0):
        c = tuning_c(f, {"R": r_ohm, "L": l_h}, Chain("series", 50.0, 2000.0))
        assert c == pytest.approx(1.0 / ((TWO_PI * f) ** 2 * l_h), rel=1e-9)


@pytest.mark.parametrize(
    "chain",
    [Chain("series", 50.0, 2000.0, 30e-12), Chain("shunt", 600.0, 10e3, 20e-12, circuit="tank")],
)
def test_retune_puts_the_peak_of_a_direct_complex_calculation_on_the_carrier(chain):
    # the divider rule in numpy complex (an independent route): scan |Vout/Vs| finely
    values = {"R": 6.8, "L": 220e-6}
    f_want = 999e3
    values["C"] = tuning_c(f_want, values, chain)
    f = np.linspace(0.99 * f_want, 1.01 * f_want, 200001)
    w = TWO_PI * f
    zl = 1.0 / (1.0 / chain.load_ohm + 1j * w * chain.load_f)
    if chain.circuit == "tank":
        zp = 1.0 / (1.0 / (values["R"] + 1j * w * values["L"]) + 1j * w * values["C"] + 1 / zl)
        gain = np.abs(zp / (chain.source_ohm + zp))
    else:
        zc = series_rlc(f, values["R"], values["L"], values["C"])
        gain = np.abs(zl / (chain.source_ohm + zc + zl))
    assert abs(f[np.argmax(gain)] - f_want) <= 2 * (f[1] - f[0])
    assert values["C"] != pytest.approx(1.0 / ((TWO_PI * f_want) ** 2 * 220e-6), rel=1e-3)


def test_a_load_capacitance_that_holds_the_peak_away_is_said():
    # 240 uH with 200 pF alone resonates at 726 kHz: no added C can reach 1.008 MHz
    chain = Chain("shunt", 100e3, 1e6, 200e-12, circuit="tank")
    with pytest.raises(
        PredictionError,
        match="no capacitance puts this chain's peak on "
        "1.008 MHz: the load's 200 pF with this L holds it below",
    ):
        tuning_c(1008e3, {"R": 4.0, "L": 240e-6}, chain)


def test_band_cover_needs_the_square_of_the_frequency_ratio():
    # Cmax/Cmin >= (fmax/fmin)^2 (derived from C = 1/(w^2 L))
    l_h = 220e-6
    chain = Chain("series", 0.0, 50.0)
    ok = band_cover((531e3, 1602e3), {"R": 5.0, "L": l_h}, chain, (20e-12, 500e-12))
    assert ok.ratio_needed == pytest.approx((1602 / 531) ** 2)
    assert ok.covered is True
    assert ok.c_needed_f[1] / ok.c_needed_f[0] == pytest.approx(ok.ratio_needed)
    assert ok.c_needed_f[1] == pytest.approx(1 / ((TWO_PI * 531e3) ** 2 * l_h))
    short = band_cover((531e3, 1602e3), {"R": 5.0, "L": l_h}, chain, (50e-12, 300e-12))
    assert short.covered is False and short.ratio_given == pytest.approx(6.0)


def test_bench_setups_become_chains():
    terminal = Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12).to_dict()
    chain = chain_from_setup(terminal)
    assert (chain.placement, chain.source_ohm, chain.load_ohm, chain.load_f) == (
        "series",
        0.0,
        47.0,
        15e-12,
    )
    open_circuit = Setup("divider", "ratio", sense_ohm=10.0, reference="open-circuit")
    assert chain_from_setup(open_circuit.to_dict()).loop_ohm == 60.0
    shunt = chain_from_setup(Setup("shunt-through", "s21").to_dict())
    assert (shunt.placement, shunt.loop_ohm) == ("shunt", 25.0)
    with pytest.raises(PredictionError, match="describe the chain"):
        chain_from_setup(Setup("impedance", "impedance").to_dict())


VALUES = {"R": 5.0, "L": 220e-6, "C": 1e-9}
CHAIN = Chain("series", 50.0, 50.0)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"wanted_hz": 0.0}, "wanted carrier 0 Hz is not a frequency above 0"),
        ({"wanted_hz": -1e6}, "wanted carrier -1 MHz"),
        ({"wanted_hz": 1e6, "carriers": (Carrier(-5e3),)}, "carrier -5 kHz"),
        ({"wanted_hz": 5e6, "c_range_f": (20e-12, 500e-12)}, "below the capacitor's minimum"),
        ({"wanted_hz": 1e6, "c_range_f": (500e-12, 20e-12)}, "smaller value first"),
        ({"wanted_hz": 1e6, "carriers": (Carrier(1.01e6),), "required_db": 60.0}, "lossless"),
        ({"wanted_hz": 1e6, "carriers": (Carrier(1.01e6),), "required_db": 0.0}, "above 0"),
        ({"wanted_hz": 1e6, "required_db": 10.0}, "needs carriers"),
    ],
)
def test_bad_requests_name_the_value_and_the_fix(kwargs, message):
    with pytest.raises(PredictionError, match=message) as err:
        predict(VALUES, CHAIN, **kwargs)
    assert "fix:" in str(err.value)


def test_chains_no_circuit_could_sit_in_are_refused():
    with pytest.raises(PredictionError, match="needs a load"):
        Chain("series", 50.0, None)
    with pytest.raises(PredictionError, match="0 ohm cannot change"):
        Chain("shunt", 0.0, 50.0)
    with pytest.raises(PredictionError, match="above 0"):
        Chain("series", 50.0, -1.0)


def test_signal_to_interference_takes_the_carrier_level_off_the_rejection():
    p = predict(VALUES, CHAIN, wanted_hz=1e6, carriers=(Carrier(1.05e6, 12.0), Carrier(0.95e6)))
    strong, weak = p.carriers
    assert strong.sir_db == pytest.approx(strong.rejection_db - 12.0)
    assert weak.sir_db == pytest.approx(weak.rejection_db)
    assert p.c_origin == "retuned"
    assert p.values["C"] == pytest.approx(1 / ((TWO_PI * 1e6) ** 2 * 220e-6))


def test_a_neighbour_stronger_than_the_wanted_carrier_is_called_out_with_the_reason():
    # C as given tunes 240 uH with 200 pF + 20 pF to 1/(2 pi sqrt(L C)) = 692.6 kHz
    chain = Chain("shunt", 100e3, 1e6, 20e-12, circuit="tank")
    values = {"R": 4.0, "L": 240e-6, "C": 200e-12}
    p = predict(values, chain, wanted_hz=1008e3, retune=False, carriers=(Carrier(999e3),))
    assert p.carriers[0].rejection_db < 0
    assert p.extremum_hz == pytest.approx(1 / (TWO_PI * math.sqrt(240e-6 * 220e-12)), rel=1e-3)
    (note,) = p.notes
    assert note.startswith("the carrier at 999 kHz comes out 0.2")
    assert "with C as given the chain's response peaks at 692." in note
    loud = predict(values, chain, wanted_hz=1008e3, carriers=(Carrier(1017e3, 12.0),))
    assert "arrives 12.0 dB above the wanted one" in loud.notes[0]
    trap = predict(
        VALUES, Chain("shunt", 600.0, 10e3), wanted_hz=999e3, tune_hz=1e6,
        carriers=(Carrier(1.1e6),),
    )  # fmt: skip
    assert "the circuit traps (its null sits at 1 MHz" in trap.notes[0]
    assert not predict(VALUES, CHAIN, wanted_hz=1e6, carriers=(Carrier(1.1e6),)).notes


def test_a_capacitor_range_is_judged_by_where_it_puts_the_chains_peak():
    # a nearly lossless tank with 20 pF across the load: the ends of 50-450 pF put the peak
    # at 1/(2 pi sqrt(L (C + 20 pF))) (the tank's resonance with all its capacitance)
    chain = Chain("shunt", 100e3, 1e6, 20e-12, circuit="tank")
    values = {"R": 0.05, "L": 240e-6, "C": 100e-12}
    with pytest.raises(PredictionError) as err:
        predict(values, chain, wanted_hz=2.2e6, c_range_f=(50e-12, 450e-12))
    low, high = (1 / (TWO_PI * math.sqrt(240e-6 * (c + 20e-12))) for c in (450e-12, 50e-12))
    assert f"puts this chain's peak from about {low / 1e3:.1f} kHz to {high / 1e6:.3f} MHz" in str(
        err.value
    )


@pytest.mark.parametrize("chain", [Chain("series", 10.0, 50.0, 1e-9), Chain("shunt", 600.0, 10e3)])
def test_loaded_q_with_a_load_capacitance_matches_the_half_power_width(chain):
    # the -3 dB width of the chain's response (or a trap's notch, from its far-off level)
    # is f0 / Q_L for a single tuned circuit (Alexander & Sadiku ch. 14, from memory)
    values = {"R": 6.8, "L": 220e-6}
    values["C"] = tuning_c(999e3, values, chain)
    q = loaded_q(values, chain, 999e3)
    f = np.linspace(999e3 * (1 - 3 / q), 999e3 * (1 + 3 / q), 400001)
    db = response_db(f, 999e3, values, chain)
    if chain.passes:
        inside = f[db > -3.0103]
    else:  # a trap: the notch's -3 dB points below the level far from it
        far = response_db(np.array([99.9e3, 9.99e6]), 999e3, values, chain).mean()
        inside = f[db < far - 3.0103]
    assert 999e3 / (inside[-1] - inside[0]) == pytest.approx(q, rel=0.02)
