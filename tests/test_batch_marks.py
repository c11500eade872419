"""fitkit batch: fit warnings, doubtful values and a resonance outside the sweep reach the
printed summary and the records; the readable CSV; the progress bar only on a terminal."""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import re
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

import fitkit.batch as batch
from fitkit.cli import main
from fitkit.cli.batch_cmd import progress
from fitkit.errors import FitError

KITS = Path(__file__).resolve().parent.parent / "sample_sweeps" / "kits"
SPEC = KITS / "spec.toml"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def table(path: Path) -> dict:
    with path.open(newline="", encoding="utf-8") as fh:
        return {Path(r["file"]).name: r for r in csv.DictReader(fh)}


@pytest.fixture
def folder(tmp_path):
    d = tmp_path / "kits"
    d.mkdir()
    for name in ("fitkit-setup.toml", "kit-01.csv", "kit-02.csv", "kit-03.csv"):
        shutil.copy(KITS / name, d / name)
    # every 12th point only: too few points in the half-power band, a real fit warning
    lines = (KITS / "kit-05.csv").read_text().splitlines()
    (d / "coarse.csv").write_text("\n".join(lines[:1] + lines[1::12]) + "\n")
    return d


def test_fit_warnings_and_doubtful_values_reach_summary_and_records(folder, tmp_path, monkeypatch):
    real = batch.fit_with

    def with_doubt(path, settings):
        fit, bench = real(path, settings)
        if Path(path).name == "kit-03.csv":
            q = fit.quantities["Q"]
            fit.quantities["Q"] = dataclasses.replace(q, doubtful="the loss is not resolved")
        return fit, bench

    monkeypatch.setattr(batch, "fit_with", with_doubt)
    out = tmp_path / "out"
    result = run("batch", folder, "--out", out, "--workers", "1", "--model", "series")
    assert result.exit_code == 0, result.output
    # the coarse sweep's sparse band marks its width-related values doubtful too
    assert "marks    1 with fit warnings, 2 with doubtful values" in result.output
    assert re.search(
        r"warning   \S+coarse\.csv: only \d+ points lie within the half-power", result.output
    )
    assert re.search(r"doubtful  \S+kit-03\.csv: Q: the loss is not resolved", result.output)
    rows = table(out / "results.csv")
    assert "half-power band" in rows["coarse.csv"]["warnings"]
    assert rows["kit-03.csv"]["doubtful"] == "Q: the loss is not resolved"
    assert rows["kit-01.csv"]["warnings"] == rows["kit-01.csv"]["doubtful"] == ""
    data = json.loads((out / "results.json").read_text())
    json_rows = {Path(r["file"]).name: r for r in data["rows"]}
    assert json_rows["kit-03.csv"]["doubtful"] == "Q: the loss is not resolved"
    assert data["marks"] == {"fit warnings": 1, "doubtful values": 2, "identical files": 0}
    kinds = {(Path(n["file"]).name, n["kind"]) for n in data["notes"]}
    assert kinds == {
        ("coarse.csv", "warnings"),
        ("coarse.csv", "doubtful"),
        ("kit-03.csv", "doubtful"),
    }


def _resonance_above(path, settings):
    if Path(path).name == "kit-02.csv":
        exc = FitError("f0 lies at 1.31 MHz, outside the sweep", remedy="sweep higher", path=path)
        exc.outside, exc.bound_hz = "above", 1.0e6
        raise exc
    return real_fit_with(path, settings)


real_fit_with = batch.fit_with


def test_a_resonance_outside_the_sweep_is_a_fail_against_a_spec(folder, tmp_path, monkeypatch):
    monkeypatch.setattr(batch, "fit_with", _resonance_above)
    out = tmp_path / "out"
    args = ("batch", folder, "--out", out, "--workers", "1", "--model", "series")
    judged = run(*args, "--spec", SPEC)
    assert judged.exit_code == 0, judged.output
    row = table(out / "results.csv")["kit-02.csv"]
    assert row["verdict"] == "fail" and row["status"] == "failed"
    assert row["reason"].startswith("resonance outside the sweep, above it (above 1 MHz)")
    assert re.search(
        r"fail      \S+kit-02\.csv: resonance outside the sweep, above it", judged.output
    )
    assert "not fitted" not in judged.output
    # with no specification there is nothing to fail: it is a file not fitted
    plain = run(*args, "--force")
    assert table(out / "results.csv")["kit-02.csv"]["verdict"] == "not fitted"
    assert "not fitted: " in plain.output and "outside the sweep" in plain.output


def test_readable_results_use_engineering_notation(folder, tmp_path):
    out = tmp_path / "out"
    assert run("batch", folder, "--out", out, "--workers", "1", "--model", "series").exit_code == 0
    si, people = table(out / "results.csv"), table(out / "results-readable.csv")
    assert "L_u" in si["kit-01.csv"] and "L_u" not in people["kit-01.csv"]
    match = re.fullmatch(r"(\d+\.\d+) uH \+/- (\d+\.\d+) uH", people["kit-01.csv"]["L"])
    assert match, people["kit-01.csv"]["L"]
    # the same value: micro is 1e-6 (SI prefixes, BIPM SI Brochure)
    assert float(match[1]) * 1e-6 == pytest.approx(float(si["kit-01.csv"]["L"]), rel=1e-4)
    assert float(match[2]) * 1e-6 == pytest.approx(float(si["kit-01.csv"]["L_u"]), rel=0.05)
    assert re.fullmatch(r"\d+\.\d+ kHz \+/- \d+\.\d+ kHz", people["kit-01.csv"]["f0"])
    assert people["kit-01.csv"]["file"] == si["kit-01.csv"]["file"]


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_bar_only_on_a_terminal(monkeypatch, folder, tmp_path):
    terminal = _Terminal()
    monkeypatch.setattr("sys.stderr", terminal)
    with progress(4) as tick:
        for _ in range(4):
            tick("fitted")
    assert "fitting" in terminal.getvalue() and "100%" in terminal.getvalue()
    monkeypatch.undo()
    result = run("batch", folder, "--out", tmp_path / "o", "--workers", "1", "--model", "series")
    assert result.exit_code == 0 and "fitting" not in result.output  # not a terminal


def test_a_real_resonance_above_the_sweep_fails_its_spec(folder, tmp_path):
    """No stand-in error: a kit whose capacitor is open (3 pF of stray capacitance with
    330 uH resonates near 5 MHz; f0 = 1/(2 pi sqrt(LC)), any circuits text) swept at
    100-300 kHz on the kits' bench fails the spec with the side named."""
    import numpy as np

    f = np.linspace(100e3, 300e3, 201)
    w = 2 * np.pi * f
    z = 5.0 + 1j * (w * 330e-6 - 1 / (w * 3e-12))
    h = 22.0 / (22.0 + z)  # the kits' divider (sense resistor 22 ohm, fitkit-setup.toml)
    rows = [f"{x:.1f},{abs(v):.6g},{np.degrees(np.angle(v)):.4f}" for x, v in zip(f, h)]
    (folder / "open.csv").write_text("freq_hz,ratio,phase_deg\n" + "\n".join(rows) + "\n")
    out = tmp_path / "out"
    result = run("batch", folder, "--out", out, "--workers", "1", "--spec", SPEC)
    assert result.exit_code == 0, result.output
    row = table(out / "results.csv")["open.csv"]
    assert row["verdict"] == "fail", row
    assert "above 300 kHz" in row["reason"], row
