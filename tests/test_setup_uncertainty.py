"""Fixture values stated with a standard uncertainty, carried into the fitted values.

The expected shares come from the benches' formulas (docs/getting-started.md, the bench
table), not from fitkit's arithmetic:

- a divider read against the generator terminal with no probe capacitance reads
  ``H = Rs / (Z + Rs)``, so ``Z = Rs (1/H - 1)``: the whole impedance scales with Rs.
  R, L and C move by the same share as Rs; f0, Q and the loaded Q do not move at all
  (derived);
- a reflection bench reads ``S11 = (Z - Z0) / (Z + Z0)``, so ``Z = Z0 (1 + S11) /
  (1 - S11)``: the same with Z0 (derived; Pozar, Microwave Engineering, ch. 4, from
  memory);
- a divider read against the generator's open-circuit EMF has the source resistance in
  the loop: ``Z + Rsource = Rs (1/H - 1)``, so an error in Rsource goes into R one for
  one and leaves L and C alone (derived).

The combined uncertainty is the sweep's and the fixture's in quadrature (JCGM 100:2008,
GUM, eq. 13, for independent inputs). A last check sets the linearised share against full
refits at the fixture value moved each way (an independent, nonlinear computation).
"""

from __future__ import annotations

import dataclasses
import json
import math
import subprocess
import sys

import pytest

from fitkit.errors import SetupError
from fitkit.fitting import fit_sweep
from fitkit.result import CircuitFit
from fitkit.setups import Setup
from tests.synthetic import make_sweep

DIVIDER = Setup("divider", "ratio", sense_ohm=47.0)
REFLECTION = Setup("reflection", "s11", z0_ohm=50.0)


def _fits(setup: Setup, field: str, share: float, **sweep_options):
    sweep = make_sweep(setup, seed=4, **sweep_options)
    u = share * getattr(setup, field)
    stated = dataclasses.replace(setup, uncertainty=((field, u),))
    return fit_sweep(sweep, setup, topology="series"), fit_sweep(sweep, stated, topology="series")


@pytest.mark.parametrize(("setup", "field"), [(DIVIDER, "sense_ohm"), (REFLECTION, "z0_ohm")])
def test_a_scale_of_the_bench_moves_r_l_c_by_its_share_and_leaves_f0_and_q(setup, field):
    share = 0.01
    plain, stated = _fits(setup, field, share)
    for name in ("R", "L", "C"):
        p, s = plain.quantities[name], stated.quantities[name]
        assert s.value == pytest.approx(p.value, rel=1e-12)  # the values stay
        expected = math.hypot(p.stderr, share * p.value)
        assert s.stderr == pytest.approx(expected, rel=1e-4), name
    for name in ("f0", "Q", "Q_loaded", "bandwidth"):
        assert stated.quantities[name].stderr == pytest.approx(
            plain.quantities[name].stderr, rel=1e-4
        ), name
    # the scale moves L up and C down together (f0 stays): the correlation nears -1
    assert stated.correlation("L", "C") < plain.correlation("L", "C") < 0


def test_the_source_resistance_in_the_loop_goes_into_r_alone():
    setup = Setup("divider", "ratio", sense_ohm=47.0, reference="open-circuit")
    plain, stated = _fits(setup, "source_ohm", 0.04)  # 50 ohm +- 2 ohm
    r_plain, r_stated = plain.quantities["R"], stated.quantities["R"]
    assert r_stated.stderr == pytest.approx(math.hypot(r_plain.stderr, 2.0), rel=1e-4)
    for name in ("L", "C", "f0"):
        assert stated.quantities[name].stderr == pytest.approx(
            plain.quantities[name].stderr, rel=1e-4
        ), name


def test_the_linearised_share_matches_refits_at_the_moved_value():
    # the probe capacitance moves the values through the loop (an inductance -C Rs^2) and
    # the phase at once: a share with no closed form here, so it is set against full
    # refits with the capacitance moved by -u and +u (small enough that every refit keeps
    # the same model: no bench term earns a place)
    setup = Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12)
    truth = {"R": 5.0, "L": 2e-6, "C": 1.6e-9}  # f0 = 2.81 MHz, where 1 pF shows
    sweep = make_sweep(setup, seed=2, span=(2.0e6, 4.0e6), truth=truth)
    u = 1e-12
    stated = dataclasses.replace(setup, uncertainty=(("probe_f", u),))
    plain, stated = (fit_sweep(sweep, s, topology="series") for s in (setup, stated))
    moved = [
        fit_sweep(sweep, dataclasses.replace(setup, probe_f=setup.probe_f + d), topology="series")
        for d in (-u, u)
    ]
    assert moved[0].choice == moved[1].choice == plain.choice
    for name in ("L", "C", "f0", "R"):
        refit_share = abs(moved[1].quantities[name].value - moved[0].quantities[name].value) / 2
        own = plain.quantities[name].stderr
        fixture_share = math.sqrt(max(stated.quantities[name].stderr ** 2 - own**2, 0.0))
        assert fixture_share == pytest.approx(refit_share, rel=0.03), name


def test_stated_uncertainties_are_read_from_both_forms():
    from fitkit.bench_file import check_override

    assert check_override("sense_ohm", "47+-1%") == (47.0, pytest.approx(0.47))
    assert check_override("sense_ohm", "4k7 \u00b1 10") == (4700.0, 10.0)
    assert check_override("probe_f", "15p +- 5p") == (15e-12, pytest.approx(5e-12))
    value, u = check_override("amplitude_vrms", "2 Vpp +- 1%")
    assert u == pytest.approx(0.01 * value)
    assert check_override("sense_ohm", "47") == (47.0, 0.0)
    assert check_override("reading_gain", "1+-2%") == (1.0, pytest.approx(0.02))
    for bad in ("47+-", "47 +- x", "47+--1"):
        with pytest.raises(SetupError, match="standard uncertainty"):
            check_override("sense_ohm", bad)
    with pytest.raises(SetupError, match="no value before"):
        check_override("sense_ohm", "+-1")
    with pytest.raises(SetupError, match="this bench has not"):
        Setup("impedance", "impedance", uncertainty=(("sense_ohm", 1.0),))


def test_the_command_line_carries_a_stated_tolerance_to_the_table(tmp_path):
    sweep = make_sweep(DIVIDER, seed=1)
    path = tmp_path / "unit.csv"
    rows = "\n".join(
        f"{f:.6f},{v.real:.9g},{v.imag:.9g}" for f, v in zip(sweep.freq_hz, sweep.values)
    )
    path.write_text("freq (Hz),re,im\n" + rows + "\n", encoding="utf-8")
    run = [sys.executable, "-m", "fitkit", "fit", str(path), "--bench", "divider"]
    plain = subprocess.run([*run, "--sense-r", "47"], capture_output=True, text=True)
    stated = subprocess.run([*run, "--sense-r", "47+-2%"], capture_output=True, text=True)
    assert plain.returncode == 0 and stated.returncode == 0, stated.stderr
    assert "sense resistor 47.00 ohm +/- 0.94 ohm" in stated.stdout
    assert "stated +/-" in stated.stdout and "stated +/-" not in plain.stdout
    bad = subprocess.run([*run, "--sense-r", "47+-two"], capture_output=True, text=True)
    assert bad.returncode == 2 and "--sense-r" in bad.stderr and "+-1%" in bad.stderr


def test_one_bench_for_both_sweeps_leaves_its_fixture_out_of_the_drift():
    # both sweeps through the same 47 ohm +- 1 % resistor: a resistor 1 % off scales L
    # now and L then alike (Z = Rs (1/H - 1)), so the change of L carries only the
    # sweeps' own shares; on two benches the fixture's shares are independent and add
    from fitkit.drift import compare, one_bench, side_of_fit
    from tests.synthetic import TRUTH

    stated = dataclasses.replace(DIVIDER, uncertainty=(("sense_ohm", 0.47),))
    grown = {**TRUTH, "L": TRUTH["L"] * 1.02}
    then = fit_sweep(make_sweep(DIVIDER, seed=5), stated, topology="series")
    now = fit_sweep(make_sweep(DIVIDER, seed=6, truth=grown), stated, topology="series")
    same = {c.name: c for c in compare(side_of_fit(now, "now"), side_of_fit(then, "then"))}
    own = math.hypot(now.quantities["L"].u_sweep, then.quantities["L"].u_sweep)
    assert same["L"].u == pytest.approx(own, rel=1e-9) and same["L"].significant
    assert one_bench(side_of_fit(now, "now"), side_of_fit(then, "then"))
    # the same with the reference saved and read back (its setup then holds lists)
    saved = CircuitFit.from_dict(json.loads(then.to_json()))
    assert saved.quantities["L"].u_sweep == then.quantities["L"].u_sweep
    again = {c.name: c for c in compare(side_of_fit(now, "now"), side_of_fit(saved, "then"))}
    assert again["L"].u == pytest.approx(own, rel=1e-9)
    other = dataclasses.replace(stated, probe_f=1e-15)  # a second bench, as near as may be
    now_there = fit_sweep(make_sweep(DIVIDER, seed=6, truth=grown), other, topology="series")
    apart = {c.name: c for c in compare(side_of_fit(now_there, "now"), side_of_fit(then, "then"))}
    combined = math.hypot(now_there.quantities["L"].stderr, then.quantities["L"].stderr)
    assert apart["L"].u == pytest.approx(combined, rel=1e-9) and not apart["L"].significant
    assert not one_bench(side_of_fit(now_there, "now"), side_of_fit(then, "then"))


def test_a_reading_gain_goes_into_the_loop_resistance_and_leaves_the_loaded_q():
    # a reading g times the truth on a divider: g Rs / (Z + Rs) = Rs / (Z/g + Rs/g), what a
    # circuit Z' = Z/g + Rs (1/g - 1) gives: L/g, g C and R/g + Rs (1/g - 1). At g = 1
    # dL/dg = -L, dC/dg = C, dR/dg = -(R + Rs); f0 and the loaded Q, w0 L/(R + Rs), stay
    # (derived from the divider formula)
    from tests.synthetic import TRUTH

    share = 0.02
    plain, stated = _fits(dataclasses.replace(DIVIDER, reading_gain=1.0), "reading_gain", share)
    shares = {"L": share * TRUTH["L"], "C": share * TRUTH["C"], "R": share * (TRUTH["R"] + 47.0)}
    for name, fixture in shares.items():
        own = plain.quantities[name].stderr
        assert stated.quantities[name].stderr == pytest.approx(math.hypot(own, fixture), rel=2e-3)
    for name in ("f0", "Q_loaded", "loaded_bandwidth"):
        assert stated.quantities[name].stderr == pytest.approx(
            plain.quantities[name].stderr, rel=1e-4
        ), name
    described = Setup(**stated.setup).describe()
    assert described.endswith("reading gain 1.000 +/- 0.020"), described


def test_plan_puts_the_bench_share_beside_the_bound_and_refuses_a_target_below_it():
    # the divider formula again: a 1 % sense resistor is 1 % of L and C whatever the
    # sweep, and nothing of f0; a target below that share cannot be planned for
    import numpy as np

    from fitkit.noise import Noise
    from fitkit.plan import cramer_rao, plan_sweep

    stated = dataclasses.replace(DIVIDER, uncertainty=(("sense_ohm", 0.47),))
    f = np.linspace(400e3, 600e3, 201)
    noise = Noise("additive", 1e-3)
    bounds = cramer_rao(stated, f, 5.0, 100e-6, 1e-9, noise)
    plain = cramer_rao(DIVIDER, f, 5.0, 100e-6, 1e-9, noise)
    assert bounds.bench["L"] == pytest.approx(0.01 * 100e-6, rel=1e-4)
    assert bounds.bench["C"] == pytest.approx(0.01 * 1e-9, rel=1e-4)
    assert bounds.bench["f0"] == pytest.approx(0.0, abs=1e-6 * plain["f0"].stderr)
    assert bounds["L"].stderr == pytest.approx(plain["L"].stderr, rel=1e-9)  # the bound stays
    assert bounds.relative("L", with_bench=True) == pytest.approx(
        math.hypot(plain.relative("L"), 0.01), rel=1e-4
    )
    refused = plan_sweep(stated, 5.0, 100e-6, 1e-9, noise, "L", 0.005)
    assert refused.shape is None and "stated uncertainties alone give L 1%" in refused.reason
    reached = plan_sweep(stated, 5.0, 100e-6, 1e-9, noise, "L", 0.011)
    assert reached.shape is not None
    assert reached.bounds.relative("L", with_bench=True) <= 0.011
