"""``fitkit acquire`` and ``fitkit simbench`` as a user runs them."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main

pytest.importorskip("pyvisa_py")


def _invoke(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def test_acquire_on_the_simulated_bench_prints_the_fit_and_writes_both_files(tmp_path):
    out = tmp_path / "sweep.csv"
    result = _invoke("acquire", out, "--simulated", "tank", "--target", "Q=1%", "--settle-min", "0")
    assert result.exit_code == 0, result.output
    assert "parallel tank" in result.stdout
    assert "Q (circuit, unloaded)" in result.stdout
    assert "stopped  target reached" in result.stdout
    assert " points  f0 " in result.stderr  # the progress line
    assert (tmp_path / "fitkit-setup.toml").is_file()
    again = _invoke("fit", out, "--model", "tank")  # an ordinary sweep file, setup beside it
    assert again.exit_code == 0
    assert "across the circuit, fed through 10 kohm" in again.stdout


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--simulated", "series", "--amplitude", "10 Vpp"], "above the ceiling of 5 Vpp"),
        (["--span", "100k:1M", "--sense-r", "47"], "no instruments given"),
        (["--simulated", "series", "--target", "Q=0.5"], "cannot read the target"),
        (["--simulated", "series", "--resume"], "there is no sweep to continue"),
        (["--simulated", "series", "--sense-r", "47"], "drop --sense-r"),
        (["--simulated", "series", "--relative", "--target", "L=1%"], "loaded Q, not L"),
        (["--simulated", "coil", "--relative"], "drop --relative and give --sense-r"),
        (["--simulated", "series", "--target", "fself=1%"], "choose --model coil"),
    ],
)
def test_acquire_refuses_with_a_clear_message(tmp_path, args, message):
    result = _invoke("acquire", tmp_path / "s.csv", *args)
    assert result.exit_code == 2
    assert message in result.stderr
    assert not (tmp_path / "s.csv").exists()


def test_acquire_takes_a_relative_sweep_without_fixture_values(tmp_path):
    out = tmp_path / "sweep.csv"
    args = ["--simulated", "series", "--relative", "--settle-min", "0", "--max-points", "40"]
    result = _invoke("acquire", out, *args)
    assert result.exit_code == 0, result.output
    assert "relative scale and no fixture values: only the shape counts" in result.stdout
    assert " Q_loaded " in result.stderr  # a relative divider aims at the loaded Q by default
    setup_text = (tmp_path / "fitkit-setup.toml").read_text(encoding="utf-8")
    assert "relative = true" in setup_text and "sense_resistor" not in setup_text
    again = _invoke("fit", out, "--model", "series", "--noise", "column")
    assert again.exit_code == 0
    assert "per point, the sweep's own sigmas" in again.stdout


def test_acquire_fits_the_coil_model_as_points_come_in(tmp_path):
    out = tmp_path / "sweep.csv"
    args = ["--simulated", "coil", "--settle-min", "0", "--max-points", "33"]
    result = _invoke("acquire", out, *args, "--target", "Q=1%")
    assert result.exit_code == 0, result.output
    assert "coil with self-capacitance" in result.stdout
    assert "C self (coil self-capacitance)" in result.stdout


def test_fit_refuses_noise_column_without_one(tmp_path):
    out = tmp_path / "s.csv"
    f = [300e3 + 2e3 * i for i in range(40)]
    out.write_text(
        "f (Hz),gain\n" + "".join(f"{x:g},{1 / (1 + ((x - 340e3) / 9e3) ** 2):.6g}\n" for x in f)
    )
    result = _invoke("fit", out, "--sense-r", "47", "--noise", "column")
    assert result.exit_code == 2
    assert "no per-point standard deviation" in result.stderr


def test_acquire_does_not_overwrite_a_sweep(tmp_path):
    out = tmp_path / "s.csv"
    out.write_text("keep me", encoding="utf-8")
    result = _invoke("acquire", out, "--simulated", "series")
    assert result.exit_code == 2
    assert "--force" in result.stderr
    assert out.read_text(encoding="utf-8") == "keep me"


def test_simbench_serves_on_loopback_and_stops():
    result = _invoke("simbench", "--seconds", "0.1")
    assert result.exit_code == 0
    assert "generator  TCPIP::127.0.0.1::" in result.stdout
    assert "fitkit acquire sweep.csv --generator TCPIP::127.0.0.1::" in result.stdout


def test_ctrl_c_stops_acquire_with_the_points_saved(tmp_path):
    out = tmp_path / "s.csv"
    root = Path(__file__).resolve().parent.parent
    env = {**os.environ, "PYTHONPATH": str(root)}
    argv = [
        sys.executable,
        "-m",
        "fitkit",
        "acquire",
        str(out),
        "--simulated",
        "series",
        "--target",
        "Q=0.0001%",
        "--max-points",
        "5000",
        "--settle-min",
        "0",
    ]
    proc = subprocess.Popen(
        argv, cwd=tmp_path, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )
    deadline = time.monotonic() + 60
    while not out.exists() and time.monotonic() < deadline:
        time.sleep(0.05)
    time.sleep(0.5)
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130
    assert "Stopped: the generator output is off" in err
    assert "# state: incomplete" in out.read_text(encoding="utf-8")
