"""Tank and coil-with-self-capacitance models: against ngspice, against the handbook
relations, recovered from synthetic sweeps through every bench, and chosen right."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.circuits import TWO_PI, coil_in_series, series_rlc, tank
from fitkit.fit_warnings import resonance_seen
from fitkit.fitting import fit_sweep
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from tests.spice import assert_complex_close, require_ngspice, run_ac, spice_value
from tests.synthetic import SETUPS

# Tank with coil loss r: L = 100 uH, r = 10 ohm, C = 100 pF -> f0 = 1.5915 MHz, Q = 100,
# dynamic resistance R_D = L/(rC) = 100 kohm (derived from the parallel-circuit relations,
# Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 14, from memory).
TANK = {"R": 10.0, "L": 100e-6, "C": 100e-12}
COIL = {"R": 5.0, "L": 100e-6, "C": 100e-12, "C_self": 8e-12}


def _noisy(setup: Setup, z: np.ndarray, f: np.ndarray, seed: int, complex_data=True):
    rng = np.random.default_rng(seed)
    m = setup.response(z, f)
    if setup.bench == "impedance":
        # an impedance analyser's error is a share of the reading (common practice)
        m = m * np.exp(1e-3 * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size)))
    else:
        m = m + 1e-3 * np.abs(m).max() * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    return Sweep(f, m if complex_data else np.abs(m), setup.kind)


def _within(fit, name, expected, k=4.0):
    q = fit[name]
    assert q.determined, name
    assert abs(q.value - expected) <= k * q.stderr, (name, q.value, q.stderr, expected)


# --- the models against ngspice AC analysis of the same netlist ---------------------------


@pytest.mark.ngspice
@pytest.mark.parametrize("which", ["tank", "coil"])
def test_impedance_matches_ngspice(which, tmp_path):
    require_ngspice()
    v = {k: spice_value(x) for k, x in (TANK if which == "tank" else COIL).items()}
    if which == "tank":
        body = f"Rr port a {v['R']}\nLl a 0 {v['L']}\nCc port 0 {v['C']}\n"
        model = lambda f: tank(f, TANK["R"], TANK["L"], TANK["C"])  # noqa: E731
    else:
        body = (
            f"Cc port b {v['C']}\nRr b a {v['R']}\nLl a 0 {v['L']}\nCs b 0 {v['C_self']}\n"
            "Ldcpath port 0 1e12\n"
        )
        model = lambda f: coil_in_series(f, *COIL.values())  # noqa: E731
    netlist = f"{which} impedance\nIprobe 0 port dc 0 ac 1\n{body}.ac dec 40 100k 20meg\n"
    freq, nodes = run_ac(netlist, ["port"], tmp_path)
    # the 1e12 H DC path shunts Z by j w 1e12 ohm: a relative change below 1e-6 here
    assert_complex_close(
        model(freq), nodes["port"], rtol_mag=2e-6, atol_deg=1e-4, freq_hz=freq, what=which
    )


def test_tank_relations():
    f0 = 1 / (TWO_PI * math.sqrt(TANK["L"] * TANK["C"]))
    assert f0 == pytest.approx(1.5915e6, rel=1e-4)
    z0 = tank(np.array([f0]), *TANK.values())[0]
    # at f0 the tank is nearly resistive at R_D (1 + 1/Q^2) = 100 kohm (1 + 1e-4)
    assert abs(z0) == pytest.approx(100e3, rel=2e-4)


def test_coil_apparent_inductance_follows_terman():
    # L_app = L / (1 - w^2 L C0) below the self-resonance (Terman, Radio Engineers'
    # Handbook, 1943, from memory); the loss is set to zero to compare reactances alone
    f = np.array([0.5e6, 1e6, 2e6])
    w = TWO_PI * f
    coil = coil_in_series(f, 0.0, COIL["L"], 1e30, COIL["C_self"])  # series C shorted
    l_app = coil.imag / w
    np.testing.assert_allclose(
        l_app, COIL["L"] / (1 - w**2 * COIL["L"] * COIL["C_self"]), rtol=1e-9
    )


# --- recovery through every bench -----------------------------------------------------


@pytest.mark.parametrize("setup_name", sorted(set(SETUPS) - {"shunt-through"}))
def test_tank_recovered_through_every_bench(setup_name):
    setup = SETUPS[setup_name]
    f = np.linspace(1.3e6, 1.9e6, 401)
    fit = fit_sweep(_noisy(setup, tank(f, *TANK.values()), f, seed=21), setup, topology="tank")
    for name, value in TANK.items():
        _within(fit, name, value)
    _within(fit, "R_dynamic", 100e3 * 1.0)
    _within(fit, "Q", 100.0)
    assert fit.topology == "tank"


def test_tank_across_the_line_is_weakly_seen_but_honest():
    """Shunt-through: a 100 kohm tank across 25 ohm barely moves S21; the errors say so."""
    setup = SETUPS["shunt-through"]
    f = np.linspace(1.3e6, 1.9e6, 401)
    fit = fit_sweep(_noisy(setup, tank(f, *TANK.values()), f, seed=22), setup, topology="tank")
    for name in ("L", "C"):
        _within(fit, name, TANK[name])


@pytest.mark.parametrize("setup_name", sorted(SETUPS))
def test_coil_recovered_through_every_bench(setup_name):
    setup = SETUPS[setup_name]
    f = np.linspace(1.0e6, 7e6, 801)
    z = coil_in_series(f, *COIL.values())
    fit = fit_sweep(_noisy(setup, z, f, seed=31), setup, topology="coil")
    for name, value in COIL.items():
        _within(fit, name, value)
    _within(fit, "f_self", 1 / (TWO_PI * math.sqrt(COIL["L"] * COIL["C_self"])))


def test_loss_growing_as_sqrt_f():
    """Loss r_dc + k sqrt(f) (wire loss once the skin depth is well below the wire radius;
    skin depth sqrt(rho / (pi f mu)), any electromagnetics text) over a wide sweep: R at
    the resonance, r_dc and k recovered, and auto prefers it to a flat loss."""
    setup = SETUPS["impedance"]
    f = np.geomspace(0.3e6, 1.5e6, 401)
    r_dc, k = 1.0, 2.0 / math.sqrt(0.1e6)
    z = series_rlc(f, r_dc + k * np.sqrt(f), 100e-6, 1e-9)
    sweep = _noisy(setup, z, f, seed=41)
    fit = fit_sweep(sweep, setup, topology="series-sqrtf", noise="0.1%")
    f0 = 1 / (TWO_PI * math.sqrt(100e-6 * 1e-9))
    _within(fit, "R", r_dc + k * math.sqrt(f0))
    _within(fit, "R_dc", r_dc)
    _within(fit, "k_skin", k)
    _within(fit, "L", 100e-6)
    assert 0.8 < fit.stats.redchi < 1.2  # the stated noise explains the residuals
    chosen = fit_sweep(sweep, setup, topology="auto")
    assert chosen.topology == "series-sqrtf", chosen.choice


# --- model choice both ways --------------------------------------------------------------


def test_choice_picks_the_tank():
    setup = SETUPS["divider-terminal"]
    f = np.linspace(1.3e6, 1.9e6, 401)
    fit = fit_sweep(_noisy(setup, tank(f, *TANK.values()), f, seed=51), setup, topology="auto")
    assert fit.topology == "tank"
    assert fit.choice.startswith("the tank fits the sweep best")


def test_choice_picks_the_coil_when_the_sweep_shows_its_self_resonance():
    setup = SETUPS["series-through"]
    f = np.linspace(1.0e6, 7e6, 801)
    z = coil_in_series(f, *COIL.values())
    fit = fit_sweep(_noisy(setup, z, f, seed=52), setup, topology="auto")
    assert fit.topology == "coil"
    assert fit.choice.startswith("the coil with self-capacitance fits")


def test_choice_says_cannot_tell_on_a_narrow_sweep():
    """Around the series resonance only, a far self-resonance leaves no mark."""
    setup = SETUPS["series-through"]
    f = np.linspace(1.45e6, 1.75e6, 301)
    z = coil_in_series(f, 5.0, 100e-6, 100e-12, 0.01e-12)  # self-resonance at 159 MHz
    fit = fit_sweep(_noisy(setup, z, f, seed=53), setup, topology="auto")
    assert fit.topology == "series"
    assert "no clear evidence" in fit.choice


def _criterion(fit, free: int) -> float:
    """Schwarz's criterion with the noise level unknown (Ann. Stat. 6, 1978),
    n ln(RSS / n) + k ln n, from a fit's own model curve (additive, complex)."""
    _, data, model = fit.model_curve
    r = np.concatenate([(model - data).real, (model - data).imag])
    return r.size * math.log(np.sum(r**2) / r.size) + free * math.log(r.size)


@pytest.mark.parametrize("above", [4.0, 8.0, 12.0, 15.0, 30.0])
@pytest.mark.parametrize("seed", [61, 62, 63])
def test_screened_choice_agrees_with_fitting_both(above, seed):
    """auto screens the coil from the series fit instead of fitting it where it cannot
    win; its choice must be the one the criterion gives when both are fitted in full
    (a self-resonance ``above`` times the sweep's top, from plain to clearly there)."""
    setup = SETUPS["series-through"]
    f = np.linspace(1.2e6, 1.9e6, 301)
    c_self = 1.0 / ((TWO_PI * above * f[-1]) ** 2 * 100e-6)
    sweep = _noisy(setup, coil_in_series(f, 5.0, 100e-6, 100e-12, c_self), f, seed=seed)
    series = _criterion(fit_sweep(sweep, setup, topology="series", noise="additive"), 3)
    coil = _criterion(fit_sweep(sweep, setup, topology="coil", noise="additive"), 4)
    if abs(series - coil - 10.0) < 3.0:
        pytest.skip("too close to the evidence threshold to call")
    chosen = fit_sweep(sweep, setup, topology="auto", noise="additive")
    assert chosen.topology == ("coil" if coil < series - 10.0 else "series"), chosen.choice


def test_band_counted_where_a_coil_resonates():
    """A coil's self-capacitance adds to C: the circuit resonates at 1/(2 pi sqrt(L (C +
    Cself))), below f0 of L and C. A sweep centred there is not short of points in its
    band (checked against the minimum of |Z| found on a dense grid by numpy)."""
    setup = SETUPS["impedance"]
    l_h, c_f, c_self = 100e-6, 1e-9, 50e-12
    dense = np.linspace(450e3, 520e3, 70001)
    seen = dense[np.argmin(np.abs(coil_in_series(dense, 5.0, l_h, c_f, c_self)))]
    f = np.linspace(seen * 0.97, seen * 1.03, 41)
    fit = fit_sweep(_noisy(setup, coil_in_series(f, 5.0, l_h, c_f, c_self), f, 71), setup,
                    topology="coil")  # fmt: skip
    assert resonance_seen(fit.quantities) == pytest.approx(seen, rel=2e-4)
    assert not any("points lie within" in w for w in fit.stats.warnings), fit.stats.warnings
