"""The sine fit of captured records against a reference library and against the truth."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import curve_fit

from fitkit.instruments.sinefit import channel_ratio, fit_sine


def _record(amplitude, phase, freq, offset, noise, n=800, dt=1e-7, seed=3):
    rng = np.random.default_rng(seed)
    t = np.arange(n) * dt
    return amplitude * np.cos(2 * np.pi * freq * t + phase) + offset + rng.normal(0, noise, n)


def test_four_parameter_fit_agrees_with_scipy_curve_fit():
    # reference: scipy's general nonlinear least squares on the same model (IEEE Std 1057
    # four-parameter model y = A cos(w t) + B sin(w t) + C, frequency free)
    y = _record(0.8, 0.7, 101.3e3, 0.05, 0.01)
    t = np.arange(y.size) * 1e-7
    fit = fit_sine(y, 1e-7, 100e3)

    def model(t, a, b, c, f):
        return a * np.cos(2 * np.pi * f * t) + b * np.sin(2 * np.pi * f * t) + c

    ref, cov = curve_fit(model, t, y, p0=[0.5, -0.5, 0.0, 100.5e3])
    assert fit.freq_hz == pytest.approx(ref[3], rel=1e-9)
    assert fit.amplitude.real == pytest.approx(ref[0], abs=1e-9)
    assert fit.amplitude.imag == pytest.approx(-ref[1], abs=1e-9)
    assert fit.offset == pytest.approx(ref[2], abs=1e-9)


def test_amplitude_variance_is_calibrated_over_many_records():
    # the stated per-record spread must match the spread seen over repeated records
    truth = 0.3 * np.exp(1j * 0.4)
    estimates, variances = [], []
    for seed in range(200):
        y = _record(abs(truth), np.angle(truth), 50e3, 0.0, 0.02, n=400, dt=2e-7, seed=seed)
        fit = fit_sine(y, 2e-7, 50e3, refine=False)
        estimates.append(fit.amplitude)
        variances.append(fit.amplitude_var)
    spread = np.var(np.real(estimates))
    assert spread == pytest.approx(np.mean(variances), rel=0.25)
    assert abs(np.mean(estimates) - truth) < 4 * math.sqrt(np.mean(variances) / 200)


def test_channel_ratio_recovers_gain_and_phase_with_its_sigma():
    h = 0.25 * np.exp(-1j * 1.1)
    a = _record(1.0, 0.2, 200e3, 0.0, 0.01, seed=5)
    b = _record(abs(h), 0.2 + np.angle(h), 200e3, 0.0, 0.01, seed=6)
    r = channel_ratio(a, b, 1e-7, 200.2e3)
    assert abs(r.ratio - h) < 4 * r.sigma
    # sigma from the delta method: about 0.01 V noise over 800 samples, |a_in| = 1
    assert r.sigma == pytest.approx(0.01 * math.sqrt(2 / 800) * math.sqrt(1 + 0.25**2), rel=0.2)
