"""``fitkit show`` prints a saved fit, prediction or drift diagnosis as its command did;
``fitkit fit`` given a saved result points to ``show``."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from fitkit.cli import main

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sweeps"
SWEEP = SAMPLES / "hand_wound_series" / "sweep.csv"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def saved(tmp_path, name: str, *args) -> tuple[Path, str]:
    """Run a command with --json into a file; return it and the command's table."""
    out = tmp_path / name
    made = run(*args, "--json")
    assert made.exit_code == 0, made.output
    out.write_text(made.output)
    table = run(*args)
    assert table.exit_code == 0, table.output
    return out, table.output


def test_show_prints_a_saved_fit_as_fit_did(tmp_path):
    path, table = saved(tmp_path, "fit.json", "fit", SWEEP)
    shown = run("show", path)
    assert shown.exit_code == 0, shown.output
    # the same table; 'setup read from' is about the run, not the fit
    assert shown.output.splitlines() == [ln for ln in table.splitlines() if "read from" not in ln]
    assert "L                                220.0" in shown.output


def test_show_prints_a_saved_prediction_as_predict_did(tmp_path):
    args = ("predict", SWEEP, "--wanted", "340k", "--carrier", "+30k", "--carrier", "-30k",
            "--band", "300k..400k", "--c-range", "500p..1.2n", "--require-db", "1")  # fmt: skip
    path, table = saved(tmp_path, "prediction.json", *args)
    shown = run("show", path)
    assert shown.exit_code == 0, shown.output
    assert shown.output == table
    assert "does NOT cover it" in shown.output and "370 kHz" in shown.output


def test_show_prints_a_saved_drift_with_every_change_and_the_reading(tmp_path):
    drift = SAMPLES / "drift"
    path, _ = saved(tmp_path, "drift.json", "drift", drift / "drifted.csv",
                    "--against", drift / "reference.csv")  # fmt: skip
    data = json.loads(path.read_text())
    shown = run("show", path)
    assert shown.exit_code == 0, shown.output
    assert "C has grown by about 6.1%" in shown.output  # the scenario: C grew by 6 %
    for line in data["reading"]:
        assert line in shown.output
    assert shown.output.count(" z = ") == len(data["changes"])


def test_fit_given_a_saved_result_points_to_show(tmp_path):
    path = tmp_path / "fit.json"
    path.write_text(run("fit", SWEEP, "--json").output)
    result = run("fit", path)
    assert result.exit_code == 2
    assert "saved result (JSON), not a sweep" in result.output
    assert f"fitkit show {path}" in result.output


def test_show_refuses_what_fitkit_did_not_save(tmp_path):
    for text, words in (("{]", "not JSON"), ('{"a": 1}', "not a fit, prediction or drift")):
        path = tmp_path / "x.json"
        path.write_text(text)
        result = run("show", path)
        assert result.exit_code == 2 and words in result.output and "x.json" in result.output
    assert "no such file" in run("show", tmp_path / "missing.json").output
