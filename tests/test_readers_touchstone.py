"""Touchstone files: round trips of files written here, and hand-written files checked
against the specification's rules (section names recalled from memory, as noted).
"""

from __future__ import annotations

import numpy as np
import pytest

from fitkit.errors import InputError
from fitkit.readers import inspect_sweep, read_sweep, write_touchstone

RNG = np.random.default_rng(20240502)
FREQ = np.linspace(1e6, 3e6, 7)
TWO_PORT = RNG.uniform(0.05, 0.9, (7, 2, 2)) * np.exp(1j * RNG.uniform(-3, 3, (7, 2, 2)))


@pytest.mark.parametrize("version", ["1.1", "2.0"])
@pytest.mark.parametrize("fmt", ["RI", "MA", "DB"])
@pytest.mark.parametrize("unit", ["Hz", "kHz", "MHz", "GHz"])
def test_two_port_round_trip(tmp_path, version, fmt, unit):
    path = write_touchstone(
        tmp_path / "dut.s2p", FREQ, TWO_PORT, fmt=fmt, version=version, freq_unit=unit
    )
    s21 = read_sweep(path)
    assert s21.kind == "s21"
    assert s21.recorded_in_db == (fmt == "DB")
    np.testing.assert_allclose(s21.freq_hz, FREQ, rtol=1e-15)
    np.testing.assert_allclose(s21.values, TWO_PORT[:, 1, 0], rtol=1e-12)
    s11 = read_sweep(path, parameter="s11")
    np.testing.assert_allclose(s11.values, TWO_PORT[:, 0, 0], rtol=1e-12)
    assert s11.metadata["reference_ohm"] == 50.0


def test_one_port_round_trip_with_reference(tmp_path):
    path = write_touchstone(tmp_path / "dut.s1p", FREQ, TWO_PORT[:, 0, 0], reference_ohm=75.0)
    sweep = read_sweep(path)
    assert sweep.kind == "s11"
    assert sweep.metadata["reference_ohm"] == 75.0
    np.testing.assert_allclose(sweep.values, TWO_PORT[:, 0, 0], rtol=1e-12)
    with pytest.raises(InputError, match="cannot read S21 from a 1-port"):
        read_sweep(path, parameter="s21")


def test_defaults_when_the_option_line_is_bare(tmp_path):
    # Rev 1.1, section "Option Line" (from memory): missing fields default to GHz S MA R 50
    path = tmp_path / "bare.s1p"
    path.write_text("! a comment\n#\n1 0.5 90\n2 0.25 0\n")
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.freq_hz, [1e9, 2e9])
    np.testing.assert_allclose(sweep.values, [0.5j, 0.25], atol=1e-15)
    assert sweep.metadata["reference_ohm"] == 50.0


def test_options_are_case_insensitive_and_only_the_first_counts(tmp_path):
    # Rev 1.1, section "Option Line" (from memory): case-insensitive, any order; only the
    # first option line in a file is used, later ones are ignored
    path = tmp_path / "case.s1p"
    path.write_text("# mhz s ri r 25\n1 0.5 0.1\n# GHz S MA R 50\n2 0.25 -0.2\n")
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.freq_hz, [1e6, 2e6])
    np.testing.assert_allclose(sweep.values, [0.5 + 0.1j, 0.25 - 0.2j])
    assert sweep.metadata["reference_ohm"] == 25.0
    assert any("second option line (line 3)" in n for n in sweep.notes)


def test_v1_two_port_order_is_n11_n21_n12_n22(tmp_path):
    # Rev 1.1, section "Data Lines" for 2-port files (from memory): N11 N21 N12 N22
    path = tmp_path / "order.s2p"
    path.write_text(
        "# Hz S RI R 50\n1 0.11 0 0.21 0 0.12 0 0.22 0\n2 0.11 0 0.21 0 0.12 0 0.22 0\n"
    )
    np.testing.assert_allclose(read_sweep(path).values, [0.21, 0.21])
    np.testing.assert_allclose(read_sweep(path, parameter="s11").values, [0.11, 0.11])


def test_v1_noise_block_is_skipped(tmp_path):
    # Rev 1.1, section "Noise Parameter Data" (from memory): the noise block follows the
    # network data and begins at the first frequency not above the previous one; each
    # line is frequency, minimum noise figure (dB), reflection magnitude and angle, rn
    path = tmp_path / "noise.s2p"
    path.write_text(
        "# MHz S MA R 50\n"
        "1 0.1 0 0.5 10 0.1 0 0.2 0\n"
        "2 0.1 0 0.4 20 0.1 0 0.2 0\n"
        "3 0.1 0 0.3 30 0.1 0 0.2 0\n"
        "! noise parameters\n"
        "1 1.5 0.3 20 0.4\n"
        "2 1.6 0.3 25 0.4\n"
    )
    sweep = read_sweep(path)
    assert sweep.points == 3
    np.testing.assert_allclose(abs(sweep.values), [0.5, 0.4, 0.3])
    assert any("noise-parameter block (lines 6 to 7" in n for n in sweep.notes)


def test_v2_keywords_reference_order_and_noise(tmp_path):
    # Version 2.0, sections "[Version]", "[Number of Ports]", "[Two-Port Data Order]",
    # "[Number of Frequencies]", "[Reference]", "[Network Data]", "[Noise Data]", "[End]"
    # (from memory): 21_12 puts N21 before N12; [Reference] may continue on the next line
    path = tmp_path / "v2.ts"
    path.write_text(
        "[Version] 2.0\n"
        "# kHz S RI R 50\n"
        "[Number of Ports] 2\n"
        "[Two-Port Data Order] 21_12\n"
        "[Number of Frequencies] 2\n"
        "[Number of Noise Frequencies] 1\n"
        "[Reference] 75\n"
        "75\n"
        "[Network Data]\n"
        "1 0.11 0 0.21 0 0.12 0 0.22 0\n"
        "2 0.11 0 0.31 0 0.12 0 0.22 0\n"
        "[Noise Data]\n"
        "1 1.5 0.3 20 0.4\n"
        "[End]\n"
    )
    reading = inspect_sweep(path)
    assert reading.format == "Touchstone 2.0"
    np.testing.assert_allclose(reading.sweep.values, [0.21, 0.31])
    np.testing.assert_allclose(reading.sweep.freq_hz, [1e3, 2e3])
    assert reading.sweep.metadata["reference_ohm"] == 75.0


def test_one_port_impedance_is_read_in_ohm(tmp_path):
    # Rev 1.1, section "Option Line" (from memory): v1 Z data are normalised to R;
    # Version 2.0, section "[Reference]" (from memory): v2 Z data are in ohm
    z = np.array([10 + 5j, 50 - 20j])
    v1 = write_touchstone(tmp_path / "z.s1p", [1e6, 2e6], z, parameter="Z", reference_ohm=50)
    assert "0.20000000000000001 0.10000000000000001" in v1.read_text()
    np.testing.assert_allclose(read_sweep(v1).values, z)
    v2 = write_touchstone(tmp_path / "z2.s1p", [1e6, 2e6], z, parameter="Z", version="2.0")
    sweep = read_sweep(v2)
    assert sweep.kind == "impedance"
    np.testing.assert_allclose(sweep.values, z)


@pytest.mark.parametrize(
    ("name", "text", "message", "line"),
    [
        ("trunc.s2p", "# MHz S RI R 50\n1 1 0 1 0 1 0 1 0\n2 1 0 1 0 1 0\n", "truncated", 3),
        (
            "trunc.ts",
            "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n"
            "[Network Data]\n1 0.5 0\n2 0.5 0\n",
            "says 3 but the network data holds 2",
            7,
        ),
        ("bad.s1p", "# MHz S RI R 50\n1 0.5 0\n2 0.5 zero\n", "'zero' is not a number", 3),
        ("bad.s1p", "# MHz S XX R 50\n1 0.5 0\n", "'XX' is not a Touchstone option", 1),
        ("down.s1p", "# MHz S RI R 50\n2 0.5 0\n1 0.5 0\n", "not above the one before", 3),
        ("y.s2p", "# MHz Y RI R 50\n1 1 0 1 0 1 0 1 0\n2 1 0 1 0 1 0 1 0\n", "Y parameters", 1),
        ("three.s3p", "# MHz S RI R 50\n" + "1" + " 0" * 18 + "\n", "3-port", None),
        ("empty.s1p", "! only a comment\n", "no option line and no data", None),
        ("noise.s2p", "# MHz S RI R 50\n2 1 0 1 0 1 0 1 0\n1 1.5 0.3 20\n", "5 numbers", 3),
    ],
)
def test_bad_touchstone_is_refused(tmp_path, name, text, message, line):
    path = tmp_path / name
    path.write_text(text)
    with pytest.raises(InputError, match=message) as info:
        read_sweep(path)
    assert info.value.path == str(path)
    assert info.value.line == line
    assert info.value.remedy


def test_writer_refuses_zero_in_db(tmp_path):
    with pytest.raises(ValueError, match="no dB form"):
        write_touchstone(tmp_path / "z.s1p", [1.0, 2.0], np.array([0.5, 0.0]), fmt="DB")


@pytest.mark.parametrize("comment", ["", "! a note\n", "!" + "x" * 300 + "\n\n! more\n"])
def test_touchstone_text_under_another_name_is_known_by_its_opening(tmp_path, comment):
    # a Touchstone file opens with comments and then its option line (Touchstone 1.1)
    path = write_touchstone(tmp_path / "dut.s1p", FREQ, TWO_PORT[:, 0, 0])
    text = path.read_text(encoding="utf-8")
    renamed = tmp_path / "dut.txt"
    renamed.write_text(comment + text, encoding="utf-8")
    reading = inspect_sweep(renamed)
    assert reading.format.startswith("Touchstone")
    np.testing.assert_allclose(reading.sweep.values, TWO_PORT[:, 0, 0], rtol=1e-12)


@pytest.mark.parametrize(
    "opening",
    [
        "#" + "x" * 300 + "\n",
        # a comment whose first words read as an option line, cut at 256 characters
        "!" + "x" * 248 + "\n# hz s, said the note: not an option line\n",
    ],
)
def test_a_table_after_a_long_comment_is_not_taken_for_touchstone(tmp_path, opening):
    path = tmp_path / "sweep.txt"
    rows = "".join(f"{f:g},{0.1 + i / 100:g}\n" for i, f in enumerate(FREQ))
    path.write_text(opening + "freq (Hz),gain\n" + rows, encoding="utf-8")
    reading = inspect_sweep(path)
    assert reading.format == "delimited text"
    assert reading.sweep.points == len(FREQ)
