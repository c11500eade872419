"""Known values go in, noisy sweeps come out, the fit must give them back within the
uncertainties it reports, for every bench setup, complex and magnitude-only."""

from __future__ import annotations

import math

import numpy as np
import pytest

from fitkit.circuits import TWO_PI
from fitkit.errors import FitError, SetupError
from fitkit.fitting import fit_sweep
from fitkit.setups import Setup
from tests.synthetic import SETUPS, TRUTH, make_sweep

# f0 = 1/(2 pi sqrt(LC)), Q = (1/R) sqrt(L/C), bandwidth = f0/Q for a series R-L-C:
# Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 14 (from memory).
F0 = 1.0 / (2 * math.pi * math.sqrt(TRUTH["L"] * TRUTH["C"]))
Q = math.sqrt(TRUTH["L"] / TRUTH["C"]) / TRUTH["R"]
EXPECTED = {
    "R": TRUTH["R"],
    "L": TRUTH["L"],
    "C": TRUTH["C"],
    "f0": F0,
    "Q": Q,
    "bandwidth": F0 / Q,
}


def _within(fit, name, expected, k=4.0):
    q = fit[name]
    assert q.determined, name
    assert abs(q.value - expected) <= k * q.stderr, (name, q.value, q.stderr, expected)


@pytest.mark.parametrize("setup_name", sorted(SETUPS))
@pytest.mark.parametrize("complex_data", [True, False])
def test_recovers_known_values(setup_name, complex_data):
    setup = SETUPS[setup_name]
    # an impedance analyser's error is a share of the reading (common practice)
    relative = setup_name == "impedance"
    sweep = make_sweep(setup, seed=7, complex_data=complex_data, relative_noise=relative)
    fit = fit_sweep(sweep, setup)
    if setup_name == "reflection" and not complex_data:
        # |S11| alone cannot tell R from Z0^2/R: the fit must say so
        assert any("tell them apart" in w for w in fit.stats.warnings)
        return
    for name, value in EXPECTED.items():
        _within(fit, name, value)
    loop = TRUTH["R"] + setup.external_ohm
    _within(fit, "Q_loaded", 2 * math.pi * F0 * TRUTH["L"] / loop)
    assert fit.stats.converged
    assert 0.7 < fit.stats.redchi < 1.3


def test_relative_impedance_noise_in_db_and_degrees():
    setup = SETUPS["impedance"]
    sweep = make_sweep(setup, seed=3, noise=0.01, relative_noise=True)
    fit = fit_sweep(sweep, setup)
    for name, value in EXPECTED.items():
        _within(fit, name, value)
    assert "relative" in fit.stats.noise


def test_one_sigma_coverage_is_honest():
    """Over many sweeps the 1-sigma interval holds the truth about 68% of the time."""
    setup = SETUPS["divider-terminal"]
    hits = {"L": 0, "Q": 0, "f0": 0}
    runs = 60
    for seed in range(runs):
        fit = fit_sweep(make_sweep(setup, seed=100 + seed, noise=3e-3), setup)
        for name in hits:
            hits[name] += abs(fit[name].value - EXPECTED[name]) <= fit[name].stderr
    for name, count in hits.items():
        # binomial 68% of 60 has sd 6%: accept 50%..85%
        assert 0.50 <= count / runs <= 0.85, (name, count / runs)


def test_relative_sweep_fixes_only_f0_and_loaded_q():
    setup = Setup("divider", "volts", sense_ohm=47.0)  # no generator amplitude: relative
    sweep = make_sweep(SETUPS["volts"], seed=11)
    fit = fit_sweep(sweep, setup)
    for name in ("R", "L", "C", "Q", "bandwidth"):
        assert not fit[name].determined
        assert fit.to_dict()["values" if name in "RLC" else "derived"][name]["value"] is None
    _within(fit, "f0", F0)
    assert {u["name"] for u in fit.undetermined} == {"R", "L", "C", "Q", "bandwidth"}
    assert "known" in fit.undetermined[0]["remedy"]


def test_known_inductance_pins_a_relative_sweep():
    setup = Setup("divider", "volts", sense_ohm=47.0)
    sweep = make_sweep(SETUPS["volts"], seed=12)
    fit = fit_sweep(sweep, setup, known={"L": (TRUTH["L"], 0.5e-6)})
    for name in ("R", "C", "Q"):
        _within(fit, name, EXPECTED[name])
    assert fit["L"].stderr == pytest.approx(0.5e-6)


def test_outlier_is_dropped_and_reported():
    setup = SETUPS["divider-terminal"]
    sweep = make_sweep(setup, seed=5)
    values = sweep.values.copy()
    values[150] *= 1.5
    from fitkit.sweep import Sweep

    fit = fit_sweep(Sweep(sweep.freq_hz, values, sweep.kind), setup)
    assert fit.stats.outliers_hz == [pytest.approx(sweep.freq_hz[150])]
    assert fit.stats.used_points == sweep.points - 1
    _within(fit, "L", TRUTH["L"])


def test_resonance_outside_the_sweep_is_refused():
    setup = SETUPS["impedance"]
    sweep = make_sweep(setup, seed=1, span=(600e3, 900e3))
    with pytest.raises(FitError, match="outside the sweep"):
        fit_sweep(sweep, setup)


def test_too_few_points_is_refused():
    setup = SETUPS["impedance"]
    with pytest.raises(FitError, match="only 5 points"):
        fit_sweep(make_sweep(setup, seed=1, points=5), setup)


def test_two_known_values_are_refused():
    setup = SETUPS["impedance"]
    with pytest.raises(SetupError, match="one pins"):
        fit_sweep(make_sweep(setup, seed=1), setup, known={"L": 1e-4, "C": 1e-9})


def test_stated_noise_makes_chi_square_a_check():
    setup = SETUPS["series-through"]
    sweep = make_sweep(setup, seed=9, noise=1e-3)
    sigma = 1e-3 * np.abs(sweep.values).max()
    good = fit_sweep(sweep, setup, noise=f"{sigma:.6g}")
    assert 0.8 < good.stats.redchi < 1.2
    assert "stated" in good.stats.noise
    bad = fit_sweep(sweep, setup, noise=f"{sigma / 5:.6g}")
    assert any("larger than stated" in w for w in bad.stats.warnings)


def test_wrong_model_shows_structured_residuals():
    """A sweep the series model cannot follow must not pass quietly."""
    from fitkit.sweep import Sweep

    f = np.linspace(350e3, 700e3, 401)
    w = 2 * np.pi * f
    rng = np.random.default_rng(0)
    z_series = 5.0 + 1j * (w * 100e-6 - 1 / (w * 1e-9))
    bent = z_series * (1 + 0.05 * np.sin(w / w[0] * 3)) * np.exp(1e-3j * rng.normal(size=f.size))
    fit = fit_sweep(Sweep(f, bent, "impedance"), SETUPS["impedance"])
    assert any("does not describe this sweep" in w for w in fit.stats.warnings)
    assert all(q.doubtful for q in fit.quantities.values() if q.determined)


def test_a_fit_ending_at_its_search_limit_says_so():
    """A coil model asked to explain a plain series sweep pushes its self-resonance to the
    top of its search range; the fit must say its values are not to be trusted."""
    setup = SETUPS["series-through"]
    sweep = make_sweep(setup, seed=2)
    fit = fit_sweep(sweep, setup, topology="coil")
    assert fit["f_self"].value > 100 * sweep.freq_hz[-1]
    assert any("limit of its search range (ln_f_self)" in w for w in fit.stats.warnings)


def test_scatter_that_grows_with_the_reading_is_pointed_out():
    """Readings with a relative error: the data choose the relative noise model by
    themselves; imposed even weights get a warning and doubtful values."""
    setup = SETUPS["divider-terminal"]
    relative = make_sweep(setup, seed=3, noise=0.01, relative_noise=True)
    imposed = fit_sweep(relative, setup, noise="additive")
    assert any("scatter grows with the reading" in w for w in imposed.stats.warnings)
    assert imposed["L"].doubtful
    even = make_sweep(setup, seed=3, noise=1e-3)
    chosen_even = fit_sweep(even, setup)
    assert chosen_even.stats.noise.startswith("additive")
    assert not chosen_even.stats.warnings
    fixed = fit_sweep(relative, setup)
    assert fixed.stats.noise.startswith("relative")
    assert not any("scatter grows" in w for w in fixed.stats.warnings)
    _within(fixed, "L", TRUTH["L"])


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_outliers_judged_in_the_noise_model_chosen(seed):
    """Noise in proportion to the reading makes the points near the peak look wild to a
    first fit with even noise; once the proportional model is chosen they are judged
    again and kept, while a real glitch is still dropped (an outlier is a point far
    from the model in the noise model the data follow)."""
    setup = SETUPS["divider-terminal"]
    clean = make_sweep(setup, seed=seed, points=801, noise=1e-3, relative_noise=True)
    values = clean.values.copy()
    glitch = 600
    values[glitch] *= 1.5
    sweep = type(clean)(clean.freq_hz, values, clean.kind)
    fit = fit_sweep(sweep, setup)
    assert fit.stats.noise.startswith("relative"), fit.stats.noise
    assert fit.stats.outliers_hz == [float(clean.freq_hz[glitch])]


def test_a_sweep_misread_a_thousandfold_is_refused_quietly(tmp_path):
    """Decimal commas misread as thousands commas: frequencies and dB readings a thousand
    times too large (gains of -700 to -22,000 dB, most of them read as exactly zero).
    The trial models overflow on the way; the answer is the clear refusal alone (no
    numerical warning: pytest turns any into an error)."""
    from fitkit.readers import read_sweep

    rng = np.random.default_rng(7)
    f = np.geomspace(80e3, 200e3, 37)
    z = 3.3 + 1j * (TWO_PI * f * 680e-6 - 1 / (TWO_PI * f * 2.2e-9))
    gain_db = 20 * np.log10(np.abs(47.0 / (47.0 + z)) * (1 + 0.01 * rng.normal(size=f.size)))
    rows = [f"{round(a * 1e3)},{round(b * 1e3)}" for a, b in zip(f / 1e3, gain_db)]
    path = tmp_path / "misread.csv"
    path.write_text("freq (kHz),gain (dB)\n" + "\n".join(rows) + "\n")
    with pytest.raises(FitError):
        fit_sweep(read_sweep(path), Setup("divider", "ratio", sense_ohm=47.0), topology="auto")
