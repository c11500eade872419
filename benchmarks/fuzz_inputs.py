"""Property-based fuzzing of the readers and the option parsers: how many tracebacks.

Draws random sweep files (tables and Touchstone text built from the pieces real files
are made of, mangled: stray quotes, ragged rows, units, SI prefixes, thousands commas,
nan/inf, binary bytes, very long lines, odd encodings), random setup and specification
files, and random command-line option values. Each example must end in a sweep or a
fitkit error (a click usage error for options); anything else is a traceback and is
counted, with the first few shown.

Run: python benchmarks/fuzz_inputs.py [examples]   (default 10000, split over the parts)
"""

from __future__ import annotations

import sys
import tempfile
import time
import traceback
from collections import Counter
from pathlib import Path

import click
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fitkit.bench_file import load_bench_file
from fitkit.cli import load_all
from fitkit.errors import FitkitError
from fitkit.readers import read_sweep
from fitkit.spec import load_spec

#: every command, its module imported (the command line loads them on demand)
COMMANDS = load_all().commands

NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-(10**6), 10**30).map(str),
    st.sampled_from(["1.119k", "681.8m", '"1,012,500.0"', "4,7", "-inf", "nan", "1e999", "."]),
    st.from_regex(r"-?[0-9]{1,4}(\.[0-9]{0,4})?([eE][-+]?[0-9]{1,3})?[pnumkMG]?", fullmatch=True),
)
WORDS = st.sampled_from(
    [
        "freq (Hz)",
        "Frequency",
        "kHz",
        "gain (dB)",
        "Gain",
        "dB",
        "Phase",
        "\u00b0",
        "rad",
        "|Z| (ohm)",
        "Re",
        "Im (ohm)",
        "CH1 Amplitude",
        "Vpp",
        "No.",
        "S21",
        "dB(S11)",
        "x",
        "",
        '"',
        "# comment",
        "Operator: A",
        "[Version] 2.0",
        "# Hz S RI R 50",
        "!",
    ]
)
DELIMITERS = st.sampled_from([",", ";", "\t", " ", "  "])


@st.composite
def table_text(draw) -> str:
    delim = draw(DELIMITERS)
    cols = draw(st.integers(1, 5))
    lines = [delim.join(draw(st.lists(WORDS, min_size=1, max_size=cols))) for _ in range(2)]
    for _ in range(draw(st.integers(0, 25))):
        cells = draw(st.lists(st.one_of(NUMBERS, WORDS), min_size=1, max_size=cols + 1))
        lines.append(delim.join(cells))
    if draw(st.booleans()):
        lines.insert(draw(st.integers(0, len(lines))), "#" + "x" * draw(st.integers(0, 300_000)))
    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    return newline.join(lines)


@st.composite
def sweep_file(draw) -> tuple[str, bytes]:
    suffix = draw(st.sampled_from([".csv", ".txt", ".s1p", ".s2p", ".ts", ".dat"]))
    if draw(st.integers(0, 9)) == 0:
        return suffix, draw(st.binary(max_size=2000))
    text = draw(table_text())
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "latin-1", "cp1252"]))
    return suffix, text.encode(encoding, errors="replace")


TOML_VALUES = st.one_of(
    st.sampled_from(['"47"', '"4k7"', "nan", "inf", "-1", "1", "true", '"x"', "[1, 2]", '"2 Vpp"']),
    st.integers(-5, 5).map(str),
    NUMBERS.map(lambda s: '"' + s.replace('"', "") + '"'),
)
TOML_KEYS = st.sampled_from(
    [
        "sense_resistor",
        "sense_resistr",
        "arrangement",
        "probe_capacitance",
        "relative",
        "generator_amplitude",
        "L",
        "Q",
        "freq",
        "kind",
        "nominal",
        "tolerance",
        "min",
        "max",
        "decision",
        "coverage",
        "decison",
    ]
)
TOML_TABLES = st.sampled_from(
    ["bench", "known", "columns", "rule", "L", "C", "Q", "f0", 'files."*.csv".bench', "bnch"]
)


@st.composite
def toml_text(draw) -> str:
    parts = []
    for _ in range(draw(st.integers(0, 4))):
        if draw(st.integers(0, 5)) == 0:
            parts.append(f"{draw(TOML_TABLES)} = {draw(TOML_VALUES)}")
            continue
        parts.append(f"[{draw(TOML_TABLES)}]")
        for _ in range(draw(st.integers(0, 3))):
            parts.append(f"{draw(TOML_KEYS)} = {draw(TOML_VALUES)}")
    if draw(st.integers(0, 9)) == 0:
        parts.append(draw(st.text(max_size=40)))
    return "\n".join(parts) + "\n"


OPTION_VALUES = st.one_of(
    NUMBERS,
    st.text(max_size=12),
    st.sampled_from(["0", "-47", "47pF", "2 Vpp", "L=220u+--1u", "L=1u", "1602k..531k"]),
)
OPTIONS = st.sampled_from(
    [
        ("fit", "--sense-r"),
        ("fit", "--source-r"),
        ("fit", "--probe-c"),
        ("fit", "--z0"),
        ("fit", "--feed-r"),
        ("fit", "--amplitude"),
        ("fit", "--known"),
        ("fit", "--noise"),
        ("fit", "--column"),
        ("fit", "--skin-above"),
        ("batch", "--coverage"),
        ("batch", "--noise"),
        ("drift", "--nominal"),
        ("plan", "--points"),
        ("plan", "--l"),
        ("predict", "--band"),
        ("predict", "--carrier"),
        ("fit", "--plot"),
    ]
)


class Tally:
    """Counts examples and tracebacks, keeping the first few for the report."""

    def __init__(self) -> None:
        self.examples: Counter = Counter()
        self.tracebacks: Counter = Counter()
        self.shown: list[str] = []
        self.seconds = 0.0

    def run(self, part: str, func) -> None:
        self.examples[part] += 1
        try:
            func()
        except (FitkitError, click.exceptions.ClickException, click.exceptions.Exit):
            pass
        except Exception:  # noqa: BLE001  what the fuzzing is looking for
            self.tracebacks[part] += 1
            if len(self.shown) < 5:
                self.shown.append(traceback.format_exc(limit=4))


def fuzz(examples: int, folder: Path) -> Tally:
    tally = Tally()
    config = settings(
        deadline=None,
        database=None,
        derandomize=True,
        suppress_health_check=list(HealthCheck),
    )

    @given(sweep_file())
    def files(drawn):
        suffix, data = drawn
        path = folder / f"sweep{suffix}"
        path.write_bytes(data)
        tally.run("sweep files", lambda: read_sweep(path))

    @given(toml_text(), st.booleans())
    def tomls(text, as_spec):
        path = folder / "fuzz.toml"
        path.write_text(text, encoding="utf-8", errors="replace")
        if as_spec:
            tally.run("spec files", lambda: load_spec(path))
        else:
            tally.run("setup files", lambda: load_bench_file(path, for_sweep="a.csv"))

    @given(OPTIONS, OPTION_VALUES)
    def options(option, value):
        command, name = option
        args = ["--noise", "1e-3", name, value] if command == "plan" else [name, value]
        if command in ("fit", "drift", "batch"):
            args = ["x.csv", *args]
        if command == "batch":
            args += ["--out", str(folder / "out")]
        # parse and run the callbacks only; the command itself is not invoked
        tally.run("options", lambda: COMMANDS[command].make_context(command, args))

    started = time.perf_counter()
    for part, share in ((files, 0.5), (tomls, 0.25), (options, 0.25)):
        settings(config, max_examples=round(examples * share))(part)()
    tally.seconds = time.perf_counter() - started
    return tally


def main_script(argv: list[str]) -> int:
    examples = int(argv[1]) if len(argv) > 1 else 10_000
    with tempfile.TemporaryDirectory() as tmp:
        tally = fuzz(examples, Path(tmp))
    total = sum(tally.examples.values())
    for part, n in sorted(tally.examples.items()):
        print(f"  {part:<12} {n:>6} examples, {tally.tracebacks[part]} traceback(s)")
    print(
        f"{total} examples in {tally.seconds:.0f} s: {sum(tally.tracebacks.values())} traceback(s)"
    )
    for text in tally.shown:
        print(text)
    return 1 if tally.tracebacks else 0


if __name__ == "__main__":
    sys.exit(main_script(sys.argv))
