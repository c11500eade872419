"""Layouts real exports use, read without options: a units row under the header, a
channel's level beside the gain, an index column, thousands commas, SI-prefixed cells, a
very long line before the table, and per-file-pattern tables in a setup file.

The files are invented here. Conversions are checked against their definitions:
- dB of a voltage ratio: |H| = 10 ** (dB / 20) (IEC 60027-3, from memory);
- SI prefixes k = 1e3, m = 1e-3, u = 1e-6 (BIPM SI Brochure, 9th edition, from memory);
- degrees to radians: pi / 180 (ISO 80000-3, from memory).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from fitkit.bench_file import build_setup, load_bench_file
from fitkit.cli import main
from fitkit.errors import InputError
from fitkit.readers import inspect_sweep, read_sweep

SAMPLE = Path(__file__).resolve().parent.parent / "sample_sweeps/hand_wound_series/sweep.csv"
FREQ_HZ = np.array([450e3, 452.5e3, 455e3, 457.5e3, 460e3])
GAIN_DB = np.array([-9.5, -4.25, -1.125, -4.5, -10.0])
PHASE_DEG = np.array([62.5, 35.0, 1.5, -36.0, -63.25])


def expected_complex():
    # dB to a linear ratio and degrees to radians by their definitions (see module doc)
    return 10 ** (GAIN_DB / 20) * np.exp(1j * PHASE_DEG * math.pi / 180)


def test_units_row_with_decimal_commas_and_a_channel_level(tmp_path):
    lines = ["Frequency;CH1 Amplitude;Gain;Phase", "Hz;Vpp;dB;\u00b0"]
    for f, g, p in zip(FREQ_HZ, GAIN_DB, PHASE_DEG, strict=True):
        lines.append(f"{f:.1f};2,000;{g};{p}".replace(".", ","))
    path = tmp_path / "scope.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    reading = inspect_sweep(path)
    sweep = reading.sweep
    assert reading.details["header"] == "line 1" and reading.details["units"] == "line 2"
    np.testing.assert_allclose(sweep.freq_hz, FREQ_HZ, rtol=1e-15)
    np.testing.assert_allclose(sweep.values, expected_complex(), rtol=1e-12)
    assert sweep.kind == "ratio" and sweep.recorded_in_db
    roles = {c.name: c.role for c in reading.columns}
    assert roles["CH1 Amplitude (Vpp)"] is None and roles["Gain (dB)"] == "mag"
    assert any("generator's level" in n for n in sweep.notes)


def test_units_row_in_radians_and_kilohertz(tmp_path):
    rows = [
        f"{f / 1e3},{10 ** (g / 20)},{p * math.pi / 180}"
        for f, g, p in zip(FREQ_HZ, GAIN_DB, PHASE_DEG, strict=True)
    ]
    path = tmp_path / "analyser.csv"
    path.write_text("Frequency,Magnitude,Phase\nkHz,,rad\n" + "\n".join(rows) + "\n")
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.freq_hz, FREQ_HZ, rtol=1e-12)
    np.testing.assert_allclose(sweep.values, expected_complex(), rtol=1e-12)


def test_index_column_and_quoted_thousands(tmp_path):
    rows = [f'{i},"{f:,.1f}",{g}' for i, (f, g) in enumerate(zip(FREQ_HZ, GAIN_DB, strict=True), 1)]
    path = tmp_path / "logger.csv"
    path.write_text("No.,Frequency (Hz),Gain (dB)\n" + "\n".join(rows) + "\n")
    assert '"452,500.0"' in path.read_text()
    reading = inspect_sweep(path)
    np.testing.assert_allclose(reading.sweep.freq_hz, FREQ_HZ, rtol=1e-15)
    np.testing.assert_allclose(reading.sweep.values, 10 ** (GAIN_DB / 20), rtol=1e-12)
    assert reading.columns[0].role is None


@pytest.mark.parametrize(
    "cell, value",
    [("1.119k", 1119.0), ("681.8m", 0.6818), ("50.250k", 50250.0), ("4.7u", 4.7e-6)],
)
def test_cells_in_engineering_notation(tmp_path, cell, value):
    # the prefix multiplies the number written (BIPM SI Brochure, from memory)
    path = tmp_path / "meter.csv"
    path.write_text(f"freq (Hz),|Z| (ohm)\n1k,{cell}\n2k,{cell}\n3.5k,{cell}\n")
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.freq_hz, [1e3, 2e3, 3.5e3], rtol=1e-15)
    np.testing.assert_allclose(sweep.values, value, rtol=1e-15)
    assert sweep.kind == "impedance"


def test_a_comment_line_longer_than_the_sniffed_head(tmp_path):
    rows = "".join(f"{f},{g}\n" for f, g in zip(FREQ_HZ, GAIN_DB, strict=True))
    path = tmp_path / "long.csv"
    path.write_text("# " + "settings " * 60_000 + "\nfreq (Hz),gain (dB)\n" + rows)
    assert path.stat().st_size > 512 * 1024
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.freq_hz, FREQ_HZ)


def test_nan_cells_are_dropped_with_a_note_naming_the_lines(tmp_path):
    path = tmp_path / "gaps.csv"
    path.write_text("freq (Hz),gain (dB)\n1,2\n2,nan\n3,4\n4,NaN\n\n\n")
    sweep = read_sweep(path)
    assert sweep.points == 2
    assert "dropped 2 blank/NaN row(s) (lines 3, 5)" in sweep.notes


SETUP = """
[bench]
arrangement = "divider"
sense_resistor = "47"

[files."va-*.csv".bench]
sense_resistor = "100"
probe_capacitance = "12p"

[files."*.s1p".bench]
arrangement = "reflection"
"""


def test_setup_tables_per_file_pattern(tmp_path):
    setup = tmp_path / "fitkit-setup.toml"
    setup.write_text(SETUP)
    plain = load_bench_file(setup, for_sweep=tmp_path / "scope-1.csv")
    assert plain["bench"] == {"arrangement": "divider", "sense_resistor": "47"}
    va = load_bench_file(setup, for_sweep=tmp_path / "va-7.csv")
    assert va["bench"] == {
        "arrangement": "divider",
        "sense_resistor": "100",
        "probe_capacitance": "12p",
    }
    assert load_bench_file(setup, for_sweep="x.s1p")["bench"]["arrangement"] == "reflection"


def test_the_setup_pattern_reaches_the_fit_setup(tmp_path):
    (tmp_path / "fitkit-setup.toml").write_text(SETUP)
    path = tmp_path / "va-2.csv"
    rows = "".join(f"{f},{g}\n" for f, g in zip(FREQ_HZ, GAIN_DB, strict=True))
    path.write_text("freq (Hz),gain (dB)\n" + rows)
    file = load_bench_file(tmp_path / "fitkit-setup.toml", for_sweep=path)
    setup = build_setup(read_sweep(path), file["bench"], {})
    assert setup.sense_ohm == 100.0 and setup.probe_f == pytest.approx(12e-12)


def test_two_patterns_for_one_file_are_refused(tmp_path):
    setup = tmp_path / "fitkit-setup.toml"
    setup.write_text(SETUP + '\n[files."va-1*".bench]\nsense_resistor = "22"\n')
    with pytest.raises(InputError, match="more than one") as info:
        load_bench_file(setup, for_sweep="va-10.csv")
    assert "exclusive" in info.value.remedy


def test_fit_uses_each_files_own_pattern(tmp_path):
    """One folder, two instruments' files: each fit records its own pattern's bench."""
    (tmp_path / "fitkit-setup.toml").write_text(SETUP)
    text = SAMPLE.read_text()
    senses = {}
    for name in ("va-1.csv", "scope-1.csv"):
        (tmp_path / name).write_text(text)
        out = CliRunner().invoke(main, ["fit", str(tmp_path / name), "--json"])
        assert out.exit_code == 0, out.output
        senses[name] = json.loads(out.output)["setup"]["sense_ohm"]
    assert senses == {"va-1.csv": 100.0, "scope-1.csv": 47.0}
