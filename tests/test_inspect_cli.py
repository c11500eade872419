"""`fitkit inspect`: what it prints for good files, exit status 2 and the message for bad."""

from __future__ import annotations

import numpy as np
from click.testing import CliRunner

from fitkit.cli import main
from fitkit.cli.read_options import columns_from_options
from fitkit.readers import write_touchstone


def run(*args):
    return CliRunner().invoke(main, ["inspect", *map(str, args)])


def test_inspect_shows_columns_range_notes_and_metadata(tmp_path):
    path = tmp_path / "scope.csv"
    path.write_text(
        "Generator amplitude;2 Vpp\n"
        "Frequency (kHz);Gain (dB);Phase (deg);Temp\n"
        "200,0;-3,5;10;21\n100,5;-6,0;40;21\n\n150;-1,0;20;21\n"
    )
    result = run(path)
    assert result.exit_code == 0, result.output
    out = result.output
    assert "delimiter: semicolon" in out
    assert "decimal mark: comma" in out
    assert "1  Frequency (kHz)  freq in kHz" in out
    assert "3  Phase (deg)      phase in deg" in out
    assert "4  Temp             not used" in out
    assert "kind:     ratio (complex, recorded in dB)" in out
    assert "points:   3" in out
    assert "range:    100.5 kHz to 200 kHz" in out
    assert "dropped 1 blank/NaN row(s) (line 5)" in out
    assert "Generator amplitude: 2 Vpp" in out


def test_inspect_overrides_and_touchstone_parameter(tmp_path):
    path = tmp_path / "plain.txt"
    path.write_text("a b\n1 0.5\n2 0.25\n")
    result = run(path, "--column", "freq=a:MHz", "--column", "mag=2:mVpp")
    assert result.exit_code == 0, result.output
    assert "freq in MHz" in result.output
    assert "kind:     volts (magnitude only)" in result.output
    s2p = write_touchstone(tmp_path / "dut.s2p", [1e6, 2e6], np.full((2, 2, 2), 0.5 + 0j))
    result = run(s2p, "--measures", "s11")
    assert result.exit_code == 0, result.output
    assert "kind:     s11 (complex)" in result.output
    assert "reference_ohm: 50.0" in result.output


def test_inspect_bad_file_exits_2_with_where_and_fix(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("freq (Hz),gain (dB)\n1,2\n2,oops\n")
    result = run(path)
    assert result.exit_code == 2
    assert f"Error: {path}, line 3, column gain (dB): cell 'oops'" in result.output
    assert "fix: repair the cell" in result.output
    missing = run(tmp_path / "none.csv")
    assert missing.exit_code == 2
    assert "no such file" in missing.output


def test_bad_column_option_is_a_usage_error(tmp_path):
    result = run(tmp_path / "x.csv", "--column", "frequency=1")
    assert result.exit_code == 2
    assert "is not ROLE=COLUMN[:UNIT]" in result.output


def test_columns_from_options():
    assert columns_from_options(column=(), measures=None) is None
    assert columns_from_options(column=("freq=1:kHz", "phase=:rad"), measures="S21") == {
        "freq": "1:kHz",
        "phase": ":rad",
        "kind": "s21",
    }


def test_inspect_and_plan_import_no_numerical_library():
    """'fitkit inspect' on a plain table and 'fitkit plan' (the bound) must start quickly:
    no lmfit, scipy, matplotlib or pandas (checked in a fresh interpreter)."""
    import subprocess
    import sys
    from pathlib import Path

    sample = Path(__file__).resolve().parent.parent / "sample_sweeps/hand_wound_series/sweep.csv"
    plan = ["plan", "--r", "6.8", "--l", "220u", "--c", "1n", "--sense-r", "47", "--noise", "1%"]
    code = (
        "import sys; from click.testing import CliRunner; from fitkit.cli import main; "
        f"a = CliRunner().invoke(main, ['inspect', {str(sample)!r}]); "
        f"b = CliRunner().invoke(main, {plan!r}); "
        "assert a.exit_code == b.exit_code == 0, (a.output, b.output); "
        "print(sorted(m for m in ('lmfit', 'scipy', 'matplotlib', 'pandas') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"
