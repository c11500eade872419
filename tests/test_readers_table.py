"""Delimited text sweeps: every dialect is written here, read back, and compared."""

from __future__ import annotations

import hashlib
import math
from pathlib import Path

import numpy as np
import pytest

from fitkit.errors import InputError
from fitkit.readers import inspect_sweep, read_sweep

FREQ_KHZ = np.array([100.0, 101.5, 103.0, 104.5])
GAIN_DB = np.array([-6.0, -3.5, -1.25, -4.0])
PHASE_DEG = np.array([30.0, 10.0, -5.0, -40.0])


def expected_complex() -> np.ndarray:
    return 10 ** (GAIN_DB / 20) * np.exp(1j * np.deg2rad(PHASE_DEG))


def write(tmp_path, text: str, *, name="sweep.csv", encoding="utf-8", newline="\n") -> str:
    path = tmp_path / name
    path.write_bytes(text.replace("\n", newline).encode(encoding))
    return str(path)


def rows(delim: str, decimal: str = ".") -> str:
    out = []
    for f, g, p in zip(FREQ_KHZ, GAIN_DB, PHASE_DEG, strict=True):
        cells = [repr(float(v)) for v in (f, g, p)]
        out.append(delim.join(c.replace(".", decimal) for c in cells))
    return "\n".join(out) + "\n"


@pytest.mark.parametrize(
    ("delim", "decimal"),
    [(",", "."), (";", "."), ("\t", "."), ("   ", "."), (";", ","), ("\t", ",")],
)
@pytest.mark.parametrize("newline", ["\n", "\r\n"])
def test_dialects_read_back_the_same_numbers(tmp_path, delim, decimal, newline):
    header = delim.join(["Frequency (kHz)", "Gain (dB)", "Phase (deg)"])
    if delim == "   ":
        header = "Frequency(kHz)   Gain(dB)   Phase(deg)"
    path = write(tmp_path, header + "\n" + rows(delim, decimal), newline=newline)
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.freq_hz, FREQ_KHZ * 1e3, rtol=1e-15)
    np.testing.assert_allclose(sweep.values, expected_complex(), rtol=1e-12)
    assert sweep.kind == "ratio"
    assert sweep.recorded_in_db
    assert sweep.source == path


@pytest.mark.parametrize(
    ("encoding", "bom"),
    [("utf-8", b""), ("utf-8", b"\xef\xbb\xbf"), ("utf-16", b""), ("latin-1", b"")],
)
def test_encodings(tmp_path, encoding, bom):
    # a degree sign and an ohm-free micro sign in the preamble exercise the decoding
    text = "Operator: J\u00fcrgen \u00b0\n" + "f (kHz),Gain (dB),Phase (\u00b0)\n" + rows(",")
    path = tmp_path / "enc.csv"
    path.write_bytes(bom + text.encode(encoding))
    sweep = read_sweep(path)
    np.testing.assert_allclose(sweep.values, expected_complex(), rtol=1e-12)
    assert sweep.metadata["Operator"] == "J\u00fcrgen \u00b0"
    if encoding == "latin-1":
        assert any("Latin-1" in n for n in sweep.notes)


def test_a_time_of_day_in_the_preamble_is_not_a_key(tmp_path):
    # "hh:mm" is a time (ISO 8601, from memory): the colon between two digits separates
    # no key from its value; "Date: ..." still names one
    text = (
        "! exported 2026-11-30 10:12\n"
        "Date: 2026-11-30 10:12:45\n"
        "freq_hz,gain_db,phase_deg\n" + rows(",")
    )
    sweep = read_sweep(write(tmp_path, text))
    assert sweep.metadata == {"Date": "2026-11-30 10:12:45"}


def test_preamble_metadata_comments_and_repeated_header(tmp_path):
    text = (
        "# exported by a bench script\n"
        "Generator amplitude,1 Vpp\n"
        "Sense resistor; 47 ohm\n"
        "\n"
        "freq_hz,gain_db,phase_deg\n"
        "1000,-6,30\n"
        "1100,-3,10\n"
        "\n"
        "freq_hz,gain_db,phase_deg\n"
        "# a comment among the rows\n"
        "1200,-1,-5\n"
        "1300,-4,-40\n"
        "\n\n"
    )
    reading = inspect_sweep(write(tmp_path, text))
    sweep = reading.sweep
    assert sweep.points == 4
    assert sweep.metadata == {"Generator amplitude": "1 Vpp", "Sense resistor": "47 ohm"}
    assert "dropped 1 blank/NaN row(s) (line 8)" in sweep.notes
    assert "skipped 1 repeated header line(s) (line 9)" in sweep.notes
    assert "skipped 1 comment line(s) among the rows (line 10)" in sweep.notes
    assert [c.role for c in reading.columns] == ["freq", "mag", "phase"]


def test_descending_sweep_is_sorted_and_duplicates_averaged(tmp_path):
    text = "f (Hz),gain\n400,0.4\n300,0.3\n300,0.5\n200,0.2\n100,0.1\n"
    sweep = read_sweep(write(tmp_path, text))
    np.testing.assert_array_equal(sweep.freq_hz, [100, 200, 300, 400])
    np.testing.assert_allclose(sweep.values, [0.1, 0.2, 0.4, 0.4])
    assert "sorted a descending sweep" in sweep.notes
    assert any(n.startswith("merged 1 repeated frequencies (averaged") for n in sweep.notes)
    with pytest.raises(InputError, match="more than once"):
        read_sweep(write(tmp_path, text), duplicates="refuse")


@pytest.mark.parametrize(
    ("unit", "factor"),
    [
        ("V", 1.0),
        ("Vrms", 1.0),
        ("mV", 1e-3),
        ("Vpp", 1 / (2 * math.sqrt(2))),
        ("mVpp", 1e-3 / (2 * math.sqrt(2))),
    ],
)
def test_volts_are_stored_rms(tmp_path, unit, factor):
    sweep = read_sweep(write(tmp_path, f"freq (MHz),Vout ({unit})\n1,2.0\n2,4.0\n"))
    assert sweep.kind == "volts"
    np.testing.assert_allclose(sweep.values, np.array([2.0, 4.0]) * factor)
    np.testing.assert_allclose(sweep.freq_hz, [1e6, 2e6])


def test_angular_frequency_and_radians(tmp_path):
    text = "omega (rad/s),|H|,phase (rad)\n6283.185307179586,0.5,0.25\n12566.370614359172,0.25,-1\n"
    sweep = read_sweep(write(tmp_path, text))
    np.testing.assert_allclose(sweep.freq_hz, [1000.0, 2000.0])
    np.testing.assert_allclose(sweep.values, [0.5 * np.exp(0.25j), 0.25 * np.exp(-1j)])


def test_impedance_magnitude_phase_and_parts(tmp_path):
    mag = read_sweep(write(tmp_path, "f [kHz],|Z| [kohm],theta [deg]\n1,2,90\n2,3,0\n"))
    assert mag.kind == "impedance"
    np.testing.assert_allclose(mag.values, [2000j, 3000], atol=1e-9)
    parts = read_sweep(write(tmp_path, "Frequency/Hz,R/ohm,X/ohm\n10,5,-7\n20,6,8\n"))
    assert parts.kind == "impedance"
    np.testing.assert_allclose(parts.values, [5 - 7j, 6 + 8j])


@pytest.mark.parametrize(
    ("header", "row1", "row2", "expected"),
    [
        ("freq (GHz),Re(S21),Im(S21)", "1,0.5,0.1", "2,0.25,-0.2", [0.5 + 0.1j, 0.25 - 0.2j]),
        ("freq (GHz),S21 mag,S21 phase (deg)", "1,0.5,90", "2,0.25,0", [0.5j, 0.25]),
        ("freq (GHz),dB(S21),S21 phase (deg)", "1,-20,180", "2,0,0", [-0.1, 1.0]),
    ],
)
def test_s_parameter_tables(tmp_path, header, row1, row2, expected):
    sweep = read_sweep(write(tmp_path, f"{header}\n{row1}\n{row2}\n"))
    assert sweep.kind == "s21"
    np.testing.assert_allclose(sweep.values, expected, atol=1e-12)


def test_s11_and_s21_table_reads_s21_unless_asked(tmp_path):
    path = write(tmp_path, "f (MHz),S11 (dB),S21 (dB)\n1,-20,-3\n2,-10,-6\n")
    s21 = read_sweep(path)
    assert s21.kind == "s21"
    np.testing.assert_allclose(s21.values, 10 ** (np.array([-3, -6]) / 20))
    s11 = read_sweep(path, columns={"kind": "s11"})
    np.testing.assert_allclose(s11.values, [0.1, 10 ** (-0.5)])


def test_overrides_by_position_name_and_unit(tmp_path):
    path = write(tmp_path, "a,b,c\n1,2,3\n2,4,5\n")
    sweep = read_sweep(path, columns={"freq": "1:kHz", "mag": {"column": "c", "unit": "mV"}})
    np.testing.assert_allclose(sweep.freq_hz, [1e3, 2e3])
    np.testing.assert_allclose(sweep.values, [3e-3, 5e-3])
    assert sweep.kind == "volts"
    # a unit alone keeps the detected column
    unit_only = read_sweep(write(tmp_path, "freq,gain\n1,2\n2,3\n"), columns={"freq": ":MHz"})
    np.testing.assert_allclose(unit_only.freq_hz, [1e6, 2e6])


def test_headerless_table_with_positions(tmp_path):
    path = write(tmp_path, "1.0 0.5\n2.0 0.25\n")
    with pytest.raises(InputError, match="no header line"):
        read_sweep(path)
    sweep = read_sweep(path, columns={"freq": "1:kHz", "mag": "2"})
    np.testing.assert_allclose(sweep.values, [0.5, 0.25])


def test_missing_units_are_said(tmp_path):
    sweep = read_sweep(write(tmp_path, "Frequency,Gain,Phase\n1,0.5,10\n2,0.25,20\n"))
    assert "column 'Frequency' states no unit; read it in Hz" in sweep.notes
    assert "column 'Phase' states no unit; read it in deg" in sweep.notes
    np.testing.assert_allclose(sweep.freq_hz, [1, 2])


@pytest.mark.parametrize(
    ("text", "message", "line"),
    [
        ("", "empty", None),
        ("\n\n  \n", "empty", None),
        ("freq (Hz),gain (dB)\n", "no row of numbers", 1),
        ("freq (Hz),gain (dB)\n1,2\n2,x3\n", "cell 'x3' in the mag column is not a number", 3),
        ("freq (Hz),gain (dB)\n1,2\n", r"1 point\(s\)", 2),
        ("freq (Hz),gain (dB)\n0,2\n1,3\n", "zero or negative", 2),
        ("freq (Hz),gain (dB)\n5,2\n-1,3\n", "zero or negative", 3),
        ("time (s),gain (dB)\n1,2\n2,3\n", "no column reads as frequency", 1),
        ("freq (Hz),gain (dB)\n1,2\nfreq (kHz),gain (dB)\n3,4\n", "mixed units", 3),
        ("freq (Hz),gain (dB)\n1,2\n2,3,4\n", "3 cells where the table has 2", 3),
        ("freq (Hz),gain (dB)\n1,2\n2,inf\n", "infinite", 3),
        ("freq (Hz),gain (dB)\n1,2\n2,7000\n", "infinite", 3),
        ("freq (Hz),Vin (V),Vout (V)\n1,2,3\n2,3,4\n", "both read as the magnitude", 1),
        ("freq (Hz),gain (dB),phase (dB)\n1,2,3\n2,3,4\n", "not a unit for the phase", 1),
    ],
)
def test_bad_tables_are_refused_with_where_and_fix(tmp_path, text, message, line):
    path = write(tmp_path, text)
    with pytest.raises(InputError, match=message) as info:
        read_sweep(path)
    assert info.value.path == path
    assert info.value.line == line
    assert info.value.remedy


@pytest.mark.parametrize(
    ("rows", "refused"),
    [
        ("1,1e-3,1e-3\n2,0.8e100,0.8e100", "beyond 1e100"),  # each part below, |v| above
        ("1,1e-3,1e-3\n2,0.7e100,0.7e100", None),  # |v| = 0.99e100
        ("1,1e-3,1e-3\n2,1,2e100", "beyond 1e100"),
        ("1,0.9e-100,0\n2,0,0.9e-100", "below 1e-100"),
        ("1,0.9e-100,0.9e-100\n2,0,0", None),  # the largest |v| = 1.27e-100
        ("1,0,0\n2,0,0", None),
    ],
)
def test_readings_outside_any_instrument_are_refused_by_their_size(tmp_path, rows, refused):
    # the limits of fitkit.readers.tidy: a |v| above 1e100, or every |v| below 1e-100
    path = write(tmp_path, f"freq (Hz),re,im\n{rows}\n")
    if refused is None:
        assert read_sweep(path).points == 2
        return
    with pytest.raises(InputError, match=refused) as info:
        read_sweep(path)
    assert info.value.line in (2, 3)


def test_binary_junk_is_refused(tmp_path):
    path = tmp_path / "junk.csv"
    path.write_bytes(bytes(np.random.default_rng(7).integers(0, 256, 4096, dtype=np.uint8)))
    with pytest.raises(InputError, match="binary"):
        read_sweep(path)


def test_bad_overrides_are_refused(tmp_path):
    path = write(tmp_path, "freq (Hz),gain\n1,2\n2,3\n")
    with pytest.raises(InputError, match="unknown column role 'frq'"):
        read_sweep(path, columns={"frq": "1"})
    with pytest.raises(InputError, match="no column 'nope'"):
        read_sweep(path, columns={"mag": "nope"})
    with pytest.raises(InputError, match="does not fit the freq column"):
        read_sweep(path, columns={"freq": {"column": 1, "unit": "dB"}})
    with pytest.raises(InputError, match="no such file"):
        read_sweep(tmp_path / "missing.csv")


def test_the_sweep_carries_the_files_sha256(tmp_path):
    # checked against hashlib over the bytes on disk (the reference implementation)
    path = write(tmp_path, "freq (Hz),gain (dB)\n1,2\n2,3\n")
    expected = hashlib.sha256(Path(path).read_bytes()).hexdigest()
    assert read_sweep(path).sha256 == expected


def test_plain_rows_and_rows_with_a_comment_read_the_same_numbers(tmp_path):
    # plain rows are parsed by numpy, rows with a comment among them by pandas: both must
    # give each cell's correctly rounded double, as Python's float() does (IEEE 754
    # round-to-nearest decimal conversion, Python language reference, from memory)
    rng = np.random.default_rng(13)
    freq = np.sort(rng.uniform(1e5, 1e6, 300))
    gain = rng.uniform(0.01, 1.0, 300)
    cells = [(f"{f:.9g}", f"{g:.17g}") for f, g in zip(freq, gain, strict=True)]
    body = [f"{f},{g}" for f, g in cells]
    plain = write(tmp_path, "freq (Hz),gain\n" + "\n".join(body) + "\n", name="plain.csv")
    body.insert(150, "# range switched")
    commented = write(tmp_path, "freq (Hz),gain\n" + "\n".join(body) + "\n", name="comment.csv")
    expected_freq = np.array([float(f) for f, _ in cells])
    expected_gain = np.array([float(g) for _, g in cells])
    for path in (plain, commented):
        sweep = read_sweep(path)
        assert np.array_equal(sweep.freq_hz, expected_freq)
        assert np.array_equal(sweep.values, expected_gain)
    assert any("comment line" in note for note in read_sweep(commented).notes)


def test_decimal_commas_whose_first_rows_look_like_thousands(tmp_path):
    # "1,500;0,250" reads as thousands or as decimal commas; a later row settles it, so
    # the whole start of the file votes, not only its first rows
    first = [f"{100 + i},{500 + i:03d};0,{250 + i:03d}" for i in range(20)]
    later = ["121,5;0,2705", "122,25;0,28"]
    path = write(tmp_path, "f (kHz);gain\n" + "\n".join(first + later) + "\n")
    reading = inspect_sweep(path)
    assert reading.details["decimal mark"] == "comma"
    np.testing.assert_allclose(reading.sweep.freq_hz[:2], [100.5e3, 101.501e3], rtol=1e-15)
    np.testing.assert_allclose(reading.sweep.freq_hz[-1], 122.25e3, rtol=1e-15)


@pytest.mark.parametrize(
    ("line", "delimiter", "decimal", "cells"),
    [
        # counted by hand from the rules in docs/readers.md: every non-empty cell a number
        ("1.5, 2 ,3", ",", ".", 3),
        (" 1e3\t-2.5E-3 ", "\t", ".", 2),
        ("1,5;-0,25;7", ";", ",", 3),
        ("1.5   2.5\t3", None, ".", 3),
        ("1.5,,3", ",", ".", 3),  # an empty cell among numbers
        ("1.5,2,", ",", ".", 2),  # a trailing delimiter
        ("1.5,nan", ",", ".", 2),
        ('1,"1,012.5"', ",", ".", 2),  # thousands commas in a quoted cell
        ("1.5;4.7u", ";", ".", 2),  # an SI prefix
        ("1.5,x", ",", ".", 0),
        ("1" * 70 + ",2", ",", ".", 0),  # no instrument writes a 70-digit number
        ("# 1,2", ",", ".", 0),
        ("1.5", ",", ".", 0),
    ],
)
def test_which_lines_are_rows_of_numbers(line, delimiter, decimal, cells):
    from fitkit.readers.cells import numeric_fields

    assert numeric_fields(line, delimiter, decimal) == cells


def test_semicolon_file_whose_every_cell_could_be_thousands(tmp_path):
    # every cell has three digits after its one comma, so each reads as a thousands group
    # or a decimal comma; under ';' (the delimiter of decimal-comma locales; common
    # practice) decimal commas win: 80 kHz and -21.589 dB, not 80 MHz and -21589 dB
    rows = [f"{80 + 2 * i},{i * 37 % 1000:03d};-21,{589 - i:03d}" for i in range(12)]
    path = write(tmp_path, "Frequency [kHz];Gain [dB]\n" + "\n".join(rows) + "\n", name="eu.csv")
    reading = inspect_sweep(path)
    assert reading.details["decimal mark"] == "comma"
    assert reading.sweep.freq_hz[0] == pytest.approx(80e3, rel=1e-12)
    assert reading.sweep.values[0] == pytest.approx(10 ** (-21.589 / 20), rel=1e-12)
