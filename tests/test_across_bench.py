"""The 'across' bench: the voltage across the circuit, fed through a resistor."""

from __future__ import annotations

import math

import numpy as np
import pytest
from click.testing import CliRunner

from fitkit.circuits import series_rlc, tank
from fitkit.cli import main
from fitkit.errors import SetupError
from fitkit.fitting import fit_sweep
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from tests.spice import assert_complex_close, require_ngspice, run_ac, spice_value

TANK = (12.0, 330e-6, 470e-12)  # coil loss, L, C: f0 = 404 kHz, Q = 70


@pytest.mark.ngspice
@pytest.mark.parametrize("reference", ["terminal", "open-circuit"])
def test_across_matches_ngspice(reference, tmp_path):
    # ngspice AC analysis of a tank fed through 47 kohm from a 50 ohm generator, a 12 pF
    # probe across the tank; the ratio against the generator's terminal or its EMF
    require_ngspice()
    setup = Setup("across", "ratio", feed_ohm=47e3, probe_f=12e-12, reference=reference)
    r, l_h, c_f = (spice_value(x) for x in TANK)
    netlist = "\n".join(
        [
            "tank across, fed through a resistor",
            "V1 emf 0 DC 0 AC 1",
            "RG emf term 50",
            f"RF term top {spice_value(47e3)}",
            f"R1 top a {r}",
            f"L1 a 0 {l_h}",
            f"C1 top 0 {c_f}",
            f"CP top 0 {spice_value(12e-12)}",
            ".ac lin 41 300e3 500e3",
        ]
    )
    freq, v = run_ac(netlist, ["top", "term"], tmp_path)
    want = v["top"] / (v["term"] if reference == "terminal" else 1.0)
    got = setup.response(tank(freq, *TANK), freq)
    assert_complex_close(got, want, freq_hz=freq, what=f"across, {reference}")


@pytest.mark.parametrize("complex_data", [True, False])
def test_tank_recovered_across(complex_data):
    setup = Setup("across", "ratio", feed_ohm=47e3, probe_f=12e-12)
    f = np.linspace(300e3, 520e3, 301)
    rng = np.random.default_rng(8)
    m = setup.response(tank(f, *TANK), f)
    m = m * np.exp(3e-3 * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size)))
    sweep = Sweep(f, m if complex_data else np.abs(m), "ratio", recorded_in_db=True)
    fit = fit_sweep(sweep, setup, topology="auto")
    assert fit.topology == "tank"
    for name, value in zip(("R", "L", "C"), TANK):
        assert abs(fit[name].value - value) <= 4 * fit[name].stderr, name
    # the feed damps the tank: Q_L = Q Rfeed / (Rfeed + R_D) (derived; see topologies.py)
    r, l_h, c_f = TANK
    q = math.sqrt(l_h / c_f) / r
    r_dynamic = l_h / (r * c_f)
    assert fit["Q_loaded"].value == pytest.approx(q * 47e3 / (47e3 + r_dynamic), rel=0.01)


def test_series_circuit_across_dips_and_fits():
    setup = Setup("across", "ratio", feed_ohm=50.0)
    f = np.linspace(300e3, 520e3, 301)
    m = setup.response(series_rlc(f, 6.8, 330e-6, 470e-12), f)
    m = m + 1e-3 * np.random.default_rng(9).normal(size=f.size)
    fit = fit_sweep(Sweep(f, m, "ratio"), setup, topology="series")
    assert abs(fit["L"].value - 330e-6) <= 4 * fit["L"].stderr


def test_across_needs_its_feed_resistor():
    with pytest.raises(SetupError, match="feed"):
        Setup("across", "ratio")


def test_cli_takes_the_across_bench(tmp_path):
    setup = Setup("across", "ratio", feed_ohm=47e3)
    f = np.linspace(300e3, 520e3, 201)
    h = setup.response(tank(f, *TANK), f)
    path = tmp_path / "across.csv"
    rows = "\n".join(f"{a:.1f},{b:.9g},{c:.9g}" for a, b, c in zip(f, h.real, h.imag))
    path.write_text("freq (Hz),re,im\n" + rows + "\n")
    out = CliRunner().invoke(main, ["fit", str(path), "--bench", "across", "--feed-r", "47k"])
    assert out.exit_code == 0, out.output
    assert "across the circuit, fed through 47 kohm" in out.output
    assert "parallel tank" in out.output
    missing = CliRunner().invoke(main, ["fit", str(path), "--bench", "across"])
    assert missing.exit_code == 2 and "--feed-r" in missing.output
