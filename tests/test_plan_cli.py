"""``fitkit plan`` as a user meets it: the table, the suggested sweep, and refusals."""

from __future__ import annotations

import re

import numpy as np
import pytest
from click.testing import CliRunner

from fitkit.cli import main
from fitkit.noise import Noise
from fitkit.plan import SweepShape, cramer_rao, resonance
from fitkit.setups import Setup
from tests.test_cli_fit import SERIES_LABELS

CIRCUIT = ("--sense-r", "50", "--r", "5", "--l", "100u", "--c", "1n")


def run(*args):
    return CliRunner().invoke(main, ["plan", *map(str, args)], catch_exceptions=False)


def row(output: str, label: str) -> str:
    return next(line for line in output.splitlines() if line.strip().startswith(label))


def test_table_shows_every_value_with_its_bound():
    out = run(*CIRCUIT, "--noise", "1e-3")
    assert out.exit_code == 0, out.output
    for label in SERIES_LABELS:
        assert label in out.output
    assert "100 uH" in row(out.output, "L ")
    # the printed relative bound of L is the library's
    setup = Setup("divider", "ratio", sense_ohm=50.0)
    f0, ql = resonance(setup, 5.0, 100e-6, 1e-9)
    b = cramer_rao(
        setup, SweepShape(3.0, 201).frequencies(f0, ql), 5.0, 100e-6, 1e-9, Noise("additive", 1e-3)
    )
    printed = float(re.search(r"([0-9.]+)%", row(out.output, "L ")).group(1))
    assert printed == pytest.approx(100 * b.relative("L"), rel=2e-3)
    assert "nH" in row(out.output, "L ")


def test_target_prints_the_cheapest_sweep():
    out = run(*CIRCUIT, "--noise", "1e-2", "--target", "Q=0.5%")
    assert out.exit_code == 0, out.output
    line = row(out.output, "target")
    assert "Q (circuit, unloaded) to 0.5%" in line and "cheapest sweep" in line
    bound = float(re.search(r"bound ([0-9.]+)%", line).group(1))
    assert bound <= 0.5


def test_f0_and_q_with_one_component_give_the_same_circuit():
    direct = run(*CIRCUIT, "--noise", "1e-3")
    other = run(
        "--sense-r", "50", "--f0", "503.2921k", "--q", "63.245553", "--l", "100u", "--noise", "1e-3"
    )
    assert other.exit_code == 0, other.output
    assert row(other.output, "C ") == row(direct.output, "C ")


def test_relative_sweep_says_what_it_cannot_determine():
    out = run(
        "--sense-r",
        "50",
        "--relative",
        "--r",
        "5",
        "--l",
        "100u",
        "--c",
        "1n",
        "--noise",
        "1e-3",
        "--magnitude-only",
        "--target",
        "L=1%",
    )
    assert out.exit_code == 0, out.output
    assert "not determined" in row(out.output, "L ")
    assert "%" in row(out.output, "f0 (resonance)")
    assert "cannot be reached with any sweep" in out.output
    assert "uncalibrated" in out.output


@pytest.mark.parametrize(
    "args, message",
    [
        (
            ("--sense-r", "50", "--r", "5", "--l", "-100u", "--c", "1n", "--noise", "1e-3"),
            "the expected L must be above zero",
        ),
        ((*CIRCUIT, "--noise", "1e-3", "--points", "0"), "a sweep of 0 points"),
        ((*CIRCUIT, "--noise", "1e-3", "--span", "0"), "the span must be above zero"),
        ((*CIRCUIT, "--noise", "loud"), "cannot read the noise level"),
        ((*CIRCUIT, "--noise", "1e-3", "--target", "X=1%"), "cannot read the target"),
        (
            ("--sense-r", "50", "--r", "5", "--l", "100u", "--noise", "1e-3"),
            "needs either --r, --l and --c",
        ),
        (("--r", "5", "--l", "100u", "--c", "1n", "--noise", "1e-3"), "sense resistor"),
    ],
)
def test_bad_input_exits_2_with_a_clear_message(args, message):
    out = run(*args)
    assert out.exit_code == 2
    assert message in out.output


def test_help_names_the_options():
    out = run("--help")
    assert out.exit_code == 0
    for option in ("--target", "--span", "--points", "--spacing", "--noise", "--centre"):
        assert option in out.output


def test_an_analyser_bench_alone_plans_a_tank_and_says_so():
    out = run("--bench", "impedance", "--model", "tank", "--r", "12", "--l", "330u",
              "--c", "470p", "--noise", "0.2%")  # fmt: skip
    assert out.exit_code == 0, out.output
    assert "model    parallel tank (coil with loss across C)" in out.output
    assert "bench    impedance read directly; reads impedance" in out.output
    # the tank's own resonance 1/(2 pi sqrt(LC)) = 404.1 kHz and Q = w0 L / R = 69.8
    assert "404.1 kHz" in row(out.output, "f0 (resonance)")
    assert "69.8" in row(out.output, "Q (loaded")
    assert "dynamic resistance" in out.output


def test_a_sweep_given_by_its_ends():
    out = run(*CIRCUIT, "--noise", "1e-3", "--start", "450k", "--stop", "560k", "--points", "111")
    assert out.exit_code == 0, out.output
    assert "111 points, linear, 450 kHz to 560 kHz" in row(out.output, "sweep")
    setup = Setup("divider", "ratio", sense_ohm=50.0)
    b = cramer_rao(setup, np.linspace(450e3, 560e3, 111), 5.0, 100e-6, 1e-9,
                   Noise("additive", 1e-3))  # fmt: skip
    printed = float(re.search(r"([0-9.]+)%", row(out.output, "L ")).group(1))
    assert printed == pytest.approx(100 * b.relative("L"), rel=2e-3)


@pytest.mark.parametrize(
    "args, message",
    [
        (("--start", "450k"), "either by --start and --stop"),
        (("--start", "450k", "--stop", "560k", "--span", "2"), "either by --start and --stop"),
        (("--start", "560k", "--stop", "450k"), "does not run upwards"),
        (("--model", "coil"), "needs its expected self-capacitance"),
    ],
)
def test_bad_sweep_ends_and_models_are_refused(args, message):
    out = run(*CIRCUIT, "--noise", "1e-3", *args)
    assert out.exit_code == 2
    assert message in out.output


def test_the_reading_follows_the_bench_in_a_setup_file(tmp_path):
    setup = tmp_path / "fitkit-setup.toml"
    setup.write_text('[bench]\narrangement = "reflection"\nreference_impedance = "50"\n')
    out = run("--setup", setup, "--r", "5", "--l", "10u", "--c", "100p", "--noise", "1e-3")
    assert out.exit_code == 0, out.output
    assert "reads s11 (the bench's reading)" in row(out.output, "bench")
    # S11 loads the series circuit with Z0: Q_L = w0 L / (R + Z0) (common practice)
    q_loaded = 2 * 3.141592653589793 * 5.0329e6 * 10e-6 / 55.0
    assert float(row(out.output, "Q (loaded").split()[-3]) == pytest.approx(q_loaded, rel=1e-3)


def test_a_coil_with_skin_effect_is_named_in_the_plan():
    out = run(*CIRCUIT, "--noise", "1e-3", "--model", "coil", "--c-self", "5p",
              "--r-dc", "2")  # fmt: skip
    assert out.exit_code == 0, out.output
    assert row(out.output, "model").strip() == (
        "model    coil with self-capacitance, in series with C, self-capacitance 5 pF, "
        "loss growing as R_dc + k sqrt(f) from 2 ohm"
    )
    assert "C self (coil self-capacitance)" in out.output
