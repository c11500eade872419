"""The fit command as a user meets it: exit codes, messages, JSON, plot, setup file."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from fitkit.cli import main
from fitkit.result import OPTIONAL, QUANTITIES, load_fit

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sweeps"
SERIES = SAMPLES / "hand_wound_series" / "sweep.csv"
VOLTS = SAMPLES / "single_channel_volts" / "sweep.csv"


#: what a series fit reports, as the table labels it
SERIES_LABELS = tuple(label for name, (_, label) in QUANTITIES.items() if name not in OPTIONAL)


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def test_fit_prints_values_with_uncertainties():
    out = run("fit", SERIES)
    assert out.exit_code == 0, out.output
    for label in SERIES_LABELS + ("correlation of L and C",):
        assert label in out.output
    assert "uH +/-" in out.output
    assert "fitkit-setup.toml" in out.output


def test_json_has_the_promised_shape(tmp_path):
    out = run("fit", SERIES, "--json")
    assert out.exit_code == 0
    data = json.loads(out.output)
    for name in ("R", "L", "C"):
        assert set(data["values"][name]) >= {"value", "u", "unit"}
    for name in ("f0", "Q", "bandwidth"):
        assert set(data["derived"][name]) >= {"value", "u"}
    assert {"points", "reduced_chi_square", "rms", "converged", "warnings"} <= set(data["fit"])
    assert data["setup"]["sense_ohm"] == 47.0
    assert -1 <= data["correlations"]["matrix"][1][2] <= 1
    saved = tmp_path / "fit.json"
    saved.write_text(out.output)
    again = load_fit(saved)
    assert again["L"].value == data["values"]["L"]["value"]
    uvals = again.correlated()
    assert uvals["L"].std_dev == pytest.approx(data["values"]["L"]["u"], rel=1e-6)
    # f0 rebuilt from the correlated L and C keeps its small error (strong correlation)
    f0 = 1 / (2 * np.pi * (uvals["L"] * uvals["C"]) ** 0.5)
    assert f0.std_dev == pytest.approx(data["derived"]["f0"]["u"], rel=1e-3)


def test_plot_is_written_and_never_silently_replaced(tmp_path):
    png = tmp_path / "fit.png"
    assert run("fit", SERIES, "--plot", png).exit_code == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    again = run("fit", SERIES, "--plot", png)
    assert again.exit_code == 2
    assert "exists already" in again.output and "--force" in again.output
    assert run("fit", SERIES, "--plot", png, "--force").exit_code == 0


def test_relative_sweep_names_what_is_missing():
    out = run("fit", VOLTS)
    assert out.exit_code == 0
    assert "not determined by this sweep" in out.output
    assert "L                                not determined" in out.output
    data = json.loads(run("fit", VOLTS, "--json").output)
    assert data["values"]["L"]["value"] is None
    pinned = run("fit", VOLTS, "--known", "L=150u+-1u")
    assert "not determined" not in pinned.output


@pytest.mark.parametrize(
    "args, message",
    [
        (["fit", "nope.csv"], "no such file"),
        (["fit", SERIES, "--sense-r", "abc"], "cannot read"),
        (["fit", SERIES, "--known", "X=3"], "known value"),
        (["fit", SERIES, "--bench", "impedance"], "cannot come from"),
        (["fit", VOLTS, "--amplitude", "2"], "Vpp, Vrms or Vpk"),
        (["fit", SERIES, "--noise", "loud"], "noise level"),
    ],
)
def test_bad_input_exits_2_with_a_fix(args, message):
    out = run(*args)
    assert out.exit_code == 2
    assert message in out.output
    assert "Traceback" not in out.output


def test_divider_without_sense_resistor(tmp_path):
    sweep = tmp_path / "s.csv"
    sweep.write_text(SERIES.read_text())
    out = run("fit", sweep)
    assert out.exit_code == 2
    assert "sense resistor" in out.output and "--sense-r" in out.output


def test_resonance_outside_sweep_exits_2(tmp_path):
    lines = SERIES.read_text().splitlines()
    header = [ln for ln in lines if ln.startswith("Freq")]
    rows = [ln for ln in lines if ln[:1].isdigit() and float(ln.split(",")[0]) < 280]
    sweep = tmp_path / "low.csv"
    sweep.write_text("\n".join(header + rows) + "\n")
    out = run("fit", sweep, "--sense-r", "47")
    assert out.exit_code == 2
    assert "outside the sweep" in out.output


def test_setup_file_with_unknown_key(tmp_path):
    sweep = tmp_path / "s.csv"
    sweep.write_text(SERIES.read_text())
    (tmp_path / "fitkit-setup.toml").write_text('[bench]\nsense_resistr = "47"\n')
    out = run("fit", sweep)
    assert out.exit_code == 2
    assert "sense_resistr" in out.output


def test_every_command_has_help():
    from fitkit.cli import load_all
    from fitkit.cli.base import COMMANDS

    commands = load_all().commands
    assert sorted(commands) == sorted(COMMANDS)  # the start-up table lists every command
    for name, command in commands.items():
        assert command.help, name
        assert run(name, "--help").exit_code == 0


def test_start_up_imports_no_numerical_library():
    """'fitkit --help' and '--version' must stay quick: no lmfit, scipy, matplotlib or
    pandas until a command needs them (checked in a fresh interpreter)."""
    import subprocess
    import sys

    code = (
        "import sys; from click.testing import CliRunner; from fitkit.cli import main; "
        "CliRunner().invoke(main, ['--help']); CliRunner().invoke(main, ['--version']); "
        "print(sorted(m for m in ('lmfit', 'scipy', 'matplotlib', 'pandas') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
