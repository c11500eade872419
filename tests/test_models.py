"""The lmfit Models of fitkit.models, used on their own as lmfit users would, agree with
fit_sweep on impedance data and recover circuits made from handbook formulas."""

from __future__ import annotations

import numpy as np
import pytest

from fitkit import Setup, Sweep, fit_sweep
from fitkit.models import CoilModel, SeriesRLCModel, TankModel

SIGMA = 0.05  # ohm, on the real and imaginary parts alike


def handbook_impedance(name: str, f, truth: dict) -> np.ndarray:
    """Impedances written out here from the textbook relations (common practice):
    series Z = R + jwL + 1/(jwC); tank (R + jwL) || 1/(jwC); a coil (R + jwL) || 1/(jwCself)
    in series with C (Terman, Radio Engineers' Handbook, 1943, from memory)."""
    w = 2 * np.pi * f
    r, ind, c = truth["R"], truth["L"], truth["C"]
    coil = r + 1j * w * ind
    if name == "series":
        return coil + 1 / (1j * w * c)
    if name == "tank":
        return 1 / (1 / coil + 1j * w * c)
    return 1 / (1 / coil + 1j * w * truth["C_self"]) + 1 / (1j * w * c)


CASES = {
    "series": (SeriesRLCModel, {"R": 6.8, "L": 220e-6, "C": 1e-9}, (250e3, 450e3)),
    "tank": (TankModel, {"R": 12.0, "L": 330e-6, "C": 470e-12}, (340e3, 470e3)),
    "coil": (
        CoilModel,
        {"R": 4.0, "L": 100e-6, "C": 2.2e-9, "C_self": 8e-12},
        (200e3, 900e3),
    ),  # fmt: skip
}


def sweep_of(name: str, seed: int = 11):
    _, truth, (lo, hi) = CASES[name]
    f = np.linspace(lo, hi, 301)
    rng = np.random.default_rng(seed)
    z = handbook_impedance(name, f, truth)
    z = z + SIGMA * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    return f, z, truth


@pytest.mark.parametrize("name", list(CASES))
def test_model_agrees_with_fit_sweep_within_a_small_fraction_of_a_standard_error(name):
    model_class, _, _ = CASES[name]
    f, z, _ = sweep_of(name)
    model = model_class()
    result = model.fit(z, model.guess(z, f=f), f=f, weights=np.full(f.size, 1 / SIGMA),
                       scale_covar=False)  # fmt: skip
    assert result.success
    sweep = Sweep(f, z, "impedance", source="synthetic")
    fit = fit_sweep(sweep, Setup(bench="impedance", kind="impedance"), topology=name,
                    noise=f"{SIGMA}")  # fmt: skip
    for p in ("R", "L", "C") + (("C_self",) if name == "coil" else ()):
        ours = fit[p]
        theirs = result.params[p]
        assert abs(theirs.value - ours.value) < 0.05 * ours.stderr, p
        assert theirs.stderr == pytest.approx(ours.stderr, rel=0.05), p
    assert result.params["f0"].value == pytest.approx(fit["f0"].value, rel=1e-7)
    assert result.params["Q"].value == pytest.approx(fit["Q"].value, abs=0.05 * fit["Q"].stderr)


@pytest.mark.parametrize("name", list(CASES))
def test_guess_starts_near_the_truth_and_the_fit_recovers_it(name):
    model_class, _, _ = CASES[name]
    f, z, truth = sweep_of(name, seed=5)
    model = model_class()
    start = model.guess(z, f=f)
    for p in ("L", "C"):
        assert start[p].value == pytest.approx(truth[p], rel=0.05)
    result = model.fit(z, start, f=f, weights=np.full(f.size, 1 / SIGMA), scale_covar=False)
    for p, value in truth.items():
        assert abs(result.params[p].value - value) < 4 * result.params[p].stderr, p
    assert result.params["f0"].value == pytest.approx(
        1 / (2 * np.pi * np.sqrt(truth["L"] * truth["C"])), rel=1e-4
    )


def test_sqrt_loss_option_and_prefix_and_bounds():
    f = np.geomspace(200e3, 600e3, 301)
    model = SeriesRLCModel(sqrt_loss=True, prefix="a_")
    params = model.from_components(R=5.0, L=220e-6, C=1e-9)
    assert params["a_R"].min == 0 and params["a_Q"].min == 0 and params["a_f0"].min == 0
    assert params["a_L"].value == pytest.approx(220e-6, rel=1e-12)
    z = model.eval(params, f=f)
    f0 = params["a_f0"].value
    # r(f) = R_dc + k sqrt(f), R at the resonance; with skin = 1, half of R at f0 grows
    # (wire loss once the skin depth is below the wire's radius; docs/models.md)
    assert z.real == pytest.approx(2.5 + 2.5 * np.sqrt(f / f0), rel=1e-12)
    assert params["a_R_dc"].value == pytest.approx(2.5, rel=1e-12)
    assert params["a_k_skin"].value == pytest.approx(2.5 / np.sqrt(f0), rel=1e-12)
    result = model.fit(z, model.guess(z, f=f), f=f)
    assert result.params["a_R"].value == pytest.approx(5.0, rel=1e-6)
    with pytest.raises(ValueError, match="guess\\(data, f=f\\)"):
        model.guess(z)
