"""Per-point standard deviations: read from a sigma column, carried on the Sweep, weighted
point by point in the fit, and checked against independent weighted least squares.

The reference is scipy.optimize.curve_fit with ``sigma=`` and ``absolute_sigma=True`` on
the circuit formula of fitkit.circuits, fitted in R, L, C directly: weighted least squares
with known per-point sigmas (the Gauss-Markov estimate; any statistics text), so its
values and standard errors are what fitkit must report.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.optimize import curve_fit

from fitkit.circuits import series_rlc
from fitkit.cli import main
from fitkit.errors import InputError, SetupError
from fitkit.fitting import fit_sweep
from fitkit.readers import inspect_sweep, read_sweep
from fitkit.setups import Setup
from fitkit.sweep import Sweep

SETUP = Setup("divider", "ratio", sense_ohm=47.0, probe_f=15e-12)
R, L, C = 5.0, 100e-6, 1e-9  # f0 = 503.3 kHz
F = np.linspace(350e3, 700e3, 201)


def _uneven_sigma(rng, size: int, low: float = 2e-4, ratio: float = 30.0) -> np.ndarray:
    """Sigmas spread log-uniformly over ``ratio``: some points far noisier than others."""
    return low * np.exp(rng.uniform(0.0, np.log(ratio), size))


def _response(r, ind, c, f=F):
    return SETUP.response(series_rlc(f, r, ind, c), f)


def _additive_sweep(seed: int, f=F) -> tuple:
    rng = np.random.default_rng(seed)
    sigma = _uneven_sigma(rng, f.size)
    m = _response(R, L, C, f)
    data = m + sigma * (rng.normal(size=f.size) + 1j * rng.normal(size=f.size))
    return data, sigma


def _reference(data, sigma, *, log_polar: bool = False) -> tuple:
    """curve_fit in (R, L in uH, C in nF), stacked parts, absolute sigmas."""

    def model(_, r, ind_uh, c_nf):
        h = _response(r, ind_uh * 1e-6, c_nf * 1e-9)
        if log_polar:
            return np.concatenate([np.log(np.abs(h)), np.angle(h)])
        return np.concatenate([h.real, h.imag])

    ydata = (
        np.concatenate([np.log(np.abs(data)), np.angle(data)])
        if log_polar
        else np.concatenate([data.real, data.imag])
    )
    s = None if sigma is None else np.concatenate([sigma, sigma])
    p, cov = curve_fit(
        model, None, ydata, p0=[R, L * 1e6, C * 1e9], sigma=s, absolute_sigma=sigma is not None
    )
    scale = np.array([1.0, 1e-6, 1e-9])
    return p * scale, np.sqrt(np.diag(cov)) * scale


def test_weighted_fit_agrees_with_curve_fit_and_weighting_changes_the_answer():
    data, sigma = _additive_sweep(3)
    fit = fit_sweep(Sweep(F, data, "ratio", sigma=sigma), SETUP)
    values, errors = _reference(data, sigma)
    for name, v, e in zip("RLC", values, errors):
        assert fit[name].value == pytest.approx(v, abs=0.01 * e), name
        assert fit[name].stderr == pytest.approx(e, rel=0.01), name
    assert fit.stats.noise.startswith("additive, per point, the sweep's own sigmas")
    # the same data fitted with equal weights lands elsewhere: the weights count here
    plain, _ = _reference(data, None)
    assert max(abs(p - v) / e for p, v, e in zip(plain, values, errors)) > 1.0
    ignored = fit_sweep(Sweep(F, data, "ratio", sigma=sigma), SETUP, noise="estimate")
    assert ignored["R"].value == pytest.approx(plain[0], rel=1e-4)
    assert "estimated" in ignored.stats.noise


def test_relative_sigmas_weight_log_magnitude_and_phase():
    rng = np.random.default_rng(11)
    sigma = _uneven_sigma(rng, F.size, low=1e-3, ratio=20.0)
    m = _response(R, L, C)
    data = m * np.exp(sigma * (rng.normal(size=F.size) + 1j * rng.normal(size=F.size)))
    fit = fit_sweep(Sweep(F, data, "ratio", sigma=sigma, sigma_relative=True), SETUP)
    values, errors = _reference(data, sigma, log_polar=True)
    for name, v, e in zip("RLC", values, errors):
        assert fit[name].value == pytest.approx(v, abs=0.01 * e), name
        assert fit[name].stderr == pytest.approx(e, rel=0.01), name
    assert fit.stats.noise.startswith("relative, per point")


def test_weighted_fit_covers_the_truth_68_percent_of_the_time():
    # honest sigmas: about 68 % of 1-sigma intervals hold the truth; with 200 runs the
    # binomial standard deviation of the share is 3.3 points, so 0.58..0.78 is 3 of them
    f = np.linspace(400e3, 620e3, 81)
    inside = {"R": [], "L": [], "Q": []}
    q_true = np.sqrt(L / C) / R  # series R-L-C: Q = (1/R) sqrt(L/C) (any circuits text)
    for seed in range(200):
        data, sigma = _additive_sweep(1000 + seed, f)
        fit = fit_sweep(Sweep(f, data, "ratio", sigma=sigma), SETUP, topology="series")
        for name, truth in (("R", R), ("L", L), ("Q", q_true)):
            inside[name].append(abs(fit[name].value - truth) < fit[name].stderr)
    for name, hits in inside.items():
        assert 0.58 <= np.mean(hits) <= 0.78, (name, np.mean(hits))


def test_sigmas_far_from_the_scatter_mark_the_values_doubtful():
    data, sigma = _additive_sweep(5)
    for wrong in (sigma / 3.0, sigma * 3.0):
        fit = fit_sweep(Sweep(F, data, "ratio", sigma=wrong), SETUP)
        assert any("per-point sigmas, outside" in w for w in fit.stats.warnings)
        assert fit["L"].doubtful
    fit = fit_sweep(Sweep(F, data, "ratio", sigma=sigma), SETUP)
    assert not fit["L"].doubtful and not fit.stats.warnings


def test_noise_column_needs_a_column():
    data, _ = _additive_sweep(5)
    with pytest.raises(SetupError, match="no per-point standard deviation"):
        fit_sweep(Sweep(F, data, "ratio"), SETUP, noise="column")


@pytest.mark.parametrize(
    ("sigma", "message"),
    [
        ([1e-3, 0.0, 1e-3], "not a finite number above zero"),
        ([1e-3, np.nan, 1e-3], "not a finite number above zero"),
        ([1e-3, 1e-3], "2 per-point standard deviations for 3 points"),
    ],
)
def test_sweep_refuses_bad_sigmas(sigma, message):
    with pytest.raises(InputError, match=message):
        Sweep([1.0, 2.0, 3.0], [1.0, 2.0, 3.0], "ratio", sigma=sigma)


def _write(tmp_path, text: str):
    path = tmp_path / "sweep.csv"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize(
    ("header", "cell", "expected", "relative"),
    [
        ("sigma", "0.002", 0.002, False),  # no unit: the readings' unit (ratio)
        ("sigma (per part)", "0.002", 0.002, False),  # as fitkit acquire writes it
        ("std (%)", "0.5", 0.005, True),
        ("uncertainty (dB)", "0.1", 0.1 * np.log(10) / 20, True),  # 20 log10 -> ln
    ],
)
def test_readers_take_a_sigma_column(tmp_path, header, cell, expected, relative):
    rows = "\n".join(f"{f},0.5,0.1,{cell}" for f in (1000, 2000, 3000))
    reading = inspect_sweep(_write(tmp_path, f"Frequency (Hz),Re(H),Im(H),{header}\n{rows}\n"))
    assert reading.sweep.sigma == pytest.approx([expected] * 3)
    assert reading.sweep.sigma_relative is relative
    assert reading.columns[3].role == "sigma"


def test_a_sigma_column_in_millivolts_is_absolute_in_volts_rms(tmp_path):
    # Vpp to Vrms: a sine's peak-to-peak is 2 sqrt 2 times its RMS (any circuits text)
    text = "f (kHz),Vout (Vpp),sigma (mVpp)\n1,2.0,10\n2,2.5,20\n"
    sweep = read_sweep(_write(tmp_path, text))
    assert sweep.kind == "volts"
    assert sweep.sigma == pytest.approx(np.array([10e-3, 20e-3]) / (2 * np.sqrt(2)))
    assert not sweep.sigma_relative


def test_sigmas_follow_their_rows_through_sorting_and_merging(tmp_path):
    text = "f (Hz),gain,sigma\n3000,0.3,0.003\n1000,0.1,0.001\n2000,0.2,0.003\n2000,0.2,0.004\n"
    sweep = read_sweep(_write(tmp_path, text))
    # the mean of two readings: sqrt(0.003^2 + 0.004^2) / 2 = 0.0025
    assert sweep.sigma == pytest.approx([0.001, 0.0025, 0.003])


def test_a_named_sigma_column_by_override(tmp_path):
    text = "f (Hz),gain,spread\n1000,0.1,1\n2000,0.2,2\n"
    sweep = read_sweep(_write(tmp_path, text), columns={"sigma": "spread:%"})
    assert sweep.sigma == pytest.approx([0.01, 0.02])
    assert sweep.sigma_relative


@pytest.mark.parametrize(
    ("text", "message", "where"),
    [
        ("f (Hz),gain (dB),std (V)\n1000,-3,0.1\n2000,-2,0.2\n", "which does not fit", "std (V)"),
        ("f (Hz),gain,sigma\n1000,0.1,0.01\n2000,0.2,\n", "not a finite number above", "line 3"),
        ("f (Hz),gain,sigma\n1000,0.1,0.01\n2000,0.2,-1\n", "not a finite number above", "line 3"),
        ("f (Hz),gain,sigma,std\n1000,0.1,1,1\n2000,0.2,1,1\n", "both read as", "line 1"),
    ],
)
def test_bad_sigma_columns_are_refused_naming_the_place(tmp_path, text, message, where):
    with pytest.raises(InputError, match=message) as info:
        read_sweep(_write(tmp_path, text))
    assert where in str(info.value)


def test_inspect_says_how_the_points_will_be_weighted(tmp_path):
    text = "f (kHz);Gain (dB);Phase (deg);sigma (dB)\n1;-3;10;0.1\n2;-2;12;0.2\n"
    result = CliRunner().invoke(main, ["inspect", str(_write(tmp_path, text))])
    assert result.exit_code == 0
    assert re.search(r"4  sigma \(dB\) +sigma in dB", result.stdout)
    # 0.1 dB is 1.15 % of the reading: 20 log10(1 + x) = 0.1 gives x = 0.0116
    line = "noise:    relative, per point, the sweep's own sigmas: 1.15 to 2.3 %"
    assert line in result.stdout
