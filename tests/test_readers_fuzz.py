"""Property tests: any dialect reads back the same numbers; corrupted files give only
fitkit's own InputError (or a valid sweep), never another exception.
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fitkit.errors import InputError
from fitkit.readers import read_sweep, write_touchstone

SETTINGS = settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)

dialects = st.sampled_from(
    [(",", "."), (";", "."), ("\t", "."), (" ", "."), (";", ","), ("\t", ",")]
)
encodings = st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "latin-1"])
newlines = st.sampled_from(["\n", "\r\n"])
gains_db = st.floats(-300, 300, allow_nan=False, allow_subnormal=False)


@st.composite
def tables(draw):
    n = draw(st.integers(2, 30))
    freq = np.cumsum(draw(st.lists(st.floats(1e-3, 1e6), min_size=n, max_size=n))) + 1.0
    freq = np.unique(freq)
    mag = np.array(draw(st.lists(gains_db, min_size=freq.size, max_size=freq.size)))
    return freq, mag


def render(freq, mag, delim, decimal, newline, preamble) -> str:
    lines = list(preamble) + [delim.join(["freq (Hz)", "gain (dB)"])]
    for f, m in zip(freq, mag, strict=True):
        lines.append(delim.join(repr(float(v)).replace(".", decimal) for v in (f, m)))
    return newline.join(lines) + newline


@SETTINGS
@given(
    table=tables(),
    dialect=dialects,
    encoding=encodings,
    newline=newlines,
    preamble=st.lists(st.sampled_from(["# comment", "Operator: A", "", "; note"]), max_size=3),
)
def test_random_dialect_reads_back_the_same_numbers(
    tmp_path, table, dialect, encoding, newline, preamble
):
    freq, gain_db = table
    delim, decimal = dialect
    path = tmp_path / "fuzz.csv"
    path.write_bytes(render(freq, gain_db, delim, decimal, newline, preamble).encode(encoding))
    sweep = read_sweep(path)
    np.testing.assert_array_equal(sweep.freq_hz, freq)
    np.testing.assert_allclose(sweep.values, 10 ** (gain_db / 20), rtol=1e-12)
    assert sweep.recorded_in_db


def corrupt(data: bytes, draw) -> bytes:
    kind = draw(st.sampled_from(["cut", "flip", "insert", "delete", "dup"]))
    at = draw(st.integers(0, max(0, len(data) - 1)))
    if kind == "cut":
        return data[:at]
    if kind == "flip":
        return data[:at] + bytes([draw(st.integers(0, 255))]) + data[at + 1 :]
    if kind == "insert":
        junk = draw(st.binary(min_size=1, max_size=8))
        return data[:at] + junk + data[at:]
    if kind == "delete":
        return data[:at] + data[at + draw(st.integers(1, 20)) :]
    return data[:at] + data[at : at + 30] + data[at:]


@SETTINGS
@given(table=tables(), dialect=dialects, data=st.data())
def test_corrupted_tables_raise_only_input_error(tmp_path, table, dialect, data):
    freq, gain_db = table
    text = render(freq, gain_db, *dialect, "\n", ["Amplitude,1 Vpp"])
    path = tmp_path / "bad.csv"
    path.write_bytes(corrupt(text.encode("utf-8"), data.draw))
    try:
        sweep = read_sweep(path)
    except InputError as exc:
        assert exc.path == str(path)
        assert exc.remedy
    else:
        assert np.all(np.diff(sweep.freq_hz) > 0)


@SETTINGS
@given(
    version=st.sampled_from(["1.1", "2.0"]), fmt=st.sampled_from(["RI", "MA", "DB"]), data=st.data()
)
def test_corrupted_touchstone_raises_only_input_error(tmp_path, version, fmt, data):
    rng = np.random.default_rng(data.draw(st.integers(0, 2**32 - 1)))
    n = 5
    s = rng.uniform(0.1, 0.9, (n, 2, 2)) * np.exp(1j * rng.uniform(-3, 3, (n, 2, 2)))
    path = write_touchstone(
        tmp_path / "bad.s2p", np.linspace(1e6, 2e6, n), s, fmt=fmt, version=version
    )
    path.write_bytes(corrupt(path.read_bytes(), data.draw))
    try:
        sweep = read_sweep(path)
    except InputError as exc:
        assert exc.path == str(path)
        assert exc.remedy
    else:
        assert np.all(np.diff(sweep.freq_hz) > 0)
