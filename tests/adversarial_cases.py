"""The case table of the adversarial suite: bad files, options, setup and spec files.

Each case is what a user might hand fitkit by mistake. The suite runs it through the
command line and asserts: no traceback, exit status 2, and a message that names the
input (the file, option or key) and says what to do. ``{S}`` is a good sweep shipped
with the project, ``{tmp}`` the case's own folder, ``{bad}`` the case's file.

Batch faults (signals, resume, locks, read-only output, symlink loops, pipes in a batch)
are covered by the batch tests, not here.
"""

from __future__ import annotations

from dataclasses import dataclass, field

GOOD = "freq (Hz),gain (dB),phase (deg)\n1000,-3,45\n2000,-1,10\n3000,-3,-45\n"


@dataclass(frozen=True)
class Case:
    """One adversarial input.

    Attributes
    ----------
    name : str
        The test id.
    args : tuple of str
        The command line after ``fitkit``.
    files : dict
        File name (in the case's folder) to its content, text or bytes.
    says : tuple of str
        Text the message must hold (case-insensitive): the input it names, the fix.
    """

    name: str
    args: tuple
    files: dict = field(default_factory=dict)
    says: tuple = ()


# ---------------------------------------------------------------- sweep files
# (name, content, what the message must name besides the file)
BAD_SWEEPS = [
    ("empty", "", ("empty",)),
    ("only_spaces", "   \n\n \t\n", ("empty",)),
    ("only_header", "freq (Hz),gain (dB)\n", ("no row of numbers",)),
    ("only_comments", "# a\n# b\n", ("no row of numbers",)),
    ("one_point", "freq (Hz),gain (dB)\n1000,-3\n", ("1 point",)),
    ("no_header", "1000,-3\n2000,-1\n", ("no header",)),
    ("text_cell", "freq (Hz),gain (dB)\n1000,-3\n2000,abc\n3000,-2\n", ("line 3", "abc")),
    ("unit_in_cell", "freq (Hz),gain (dB)\n1000,-3\n2000,-1 dB\n3000,-2\n", ("line 3",)),
    ("minus_inf_db", "freq (Hz),gain (dB)\n1000,-3\n2000,-inf\n3000,-2\n", ("line 3", "gain")),
    ("plus_inf_mag", "freq (Hz),gain\n1000,0.3\n2000,inf\n3000,0.2\n", ("line 3", "gain")),
    ("inf_phase", GOOD.replace("-1,10", "-1,inf"), ("line 3", "phase")),
    ("inf_freq", "freq (Hz),gain (dB)\n1000,-3\ninf,-1\n3000,-2\n", ("line 3", "freq")),
    ("huge_db", "freq (Hz),gain (dB)\n1000,-3\n2000,7000\n3000,-2\n", ("line 3", "infinite")),
    ("overflow_number", "freq (Hz),gain\n1000,0.3\n2000,1e999\n3000,0.2\n", ("line 3",)),
    ("huge_reading", "freq (Hz),gain\n1000,1e300\n2000,1e300\n", ("line 2", "unit")),
    ("tiny_readings", "freq (Hz),gain\n1000,1e-300\n2000,2e-300\n", ("line 3", "unit")),
    ("huge_freq", "freq (Hz),gain\n1e300,0.1\n2e300,0.2\n", ("line 2", "10 THz")),
    ("huge_freq_unit", "freq (GHz),gain\n1e5,0.1\n2e5,0.2\n", ("line 2", "unit")),
    ("zero_freq", "freq (Hz),gain (dB)\n0,-3\n2000,-1\n3000,-2\n", ("line 2", "zero")),
    ("negative_freq", "freq (Hz),gain (dB)\n-5,-3\n2000,-1\n3000,-2\n", ("line 2", "negative")),
    ("all_nan", "freq (Hz),gain (dB)\nnan,nan\nnan,nan\n", ("0 point",)),
    ("ragged_row", "freq (Hz),gain (dB)\n1000,-3\n2000,-1,5,6\n3000,-2\n", ("line 3", "cells")),
    (
        "ragged_deep",
        "freq (Hz),gain (dB)\n" + "".join(f"{1000 + i},-3\n" for i in range(3000)) + "1,2,3\n",
        ("line 3002",),
    ),
    ("open_quote", 'freq (Hz),gain (dB)\n1000,-3\n"2000,-1\n3000,-2\n', ("line 3", "quote")),
    (
        "open_quote_deep",
        "freq (Hz),gain (dB)\n" + "".join(f"{1000 + i},-3\n" for i in range(2000)) + '"9,9\n',
        ("line 2002", "quote"),
    ),
    ("no_freq_column", "alpha,beta\n1,2\n2,3\n", ("frequency",)),
    ("no_measured_column", "freq (Hz),temp\n1,2\n2,3\n", ("measured value",)),
    ("two_freq", "freq (Hz),f (kHz),gain (dB)\n1,2,3\n2,3,4\n", ("both read as the frequency",)),
    ("two_gain", "freq (Hz),gain (dB),mag (dB)\n1,2,3\n2,3,4\n", ("both read as the magnitude",)),
    ("vin_vout", "freq (Hz),Vin (V),Vout (V)\n1,2,3\n2,3,4\n", ("both read as the magnitude",)),
    (
        "phase_in_db",
        "freq (Hz),gain (dB),phase (dB)\n1,2,3\n2,3,4\n",
        ("not a unit for the phase",),
    ),
    ("freq_in_ohm", "freq (ohm),gain (dB)\n1,2\n2,3\n", ("frequency",)),
    ("real_without_imag", "freq (Hz),Re (ohm)\n1,2\n2,3\n", ("imaginary",)),
    ("real_in_db", "freq (Hz),Re (dB),Im (dB)\n1,2,3\n2,3,4\n", ("in dB",)),
    ("mixed_parts_units", "freq (Hz),Re (ohm),Im (V)\n1,2,3\n2,3,4\n", ("different units",)),
    (
        "second_header",
        "freq (Hz),gain (dB)\n1000,-3\nfreq (kHz),gain (dB)\n2,-1\n",
        ("line 3", "second header"),
    ),
    ("binary", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" + bytes(range(256)) * 4, ("binary",)),
    ("nul_bytes", "freq (Hz),gain (dB)\n1000,-3\x00\n2000,-1\n", ("binary",)),
    ("utf16_no_bom", "freq (Hz),gain (dB)\n1000,-3\n".encode("utf-16-le"), ("binary",)),
    ("bad_utf16", b"\xff\xfe" + "freq,gain\n".encode("utf-16-le") + b"\x00\xd8", ("utf-16",)),
    (
        "long_line_only",
        "# " + "x" * 300_000 + "\n",
        ("no row of numbers",),
    ),
    (
        "long_cell_row",
        "freq (Hz),gain (dB)\n1000,-3\n2000," + "9" * 200_000 + "x\n",
        ("line 3",),
    ),
    ("duplicate_refused_unit", "freq (Hz),gain (dB)\n1000,-3\n1000,-3\n", ("1 point",)),
    ("dot_in_comma_file", "freq (Hz);gain (dB)\n1,5;2,5\n2,5;3.5;7\n", ("line 3",)),
    ("only_units_row", "Hz,dB\n", ("no row of numbers",)),
    ("prefix_garbage", "freq (Hz),gain\n1.1k,0.3\n2.2q,0.2\n3.3k,0.1\n", ("line 3",)),
    ("thousands_broken", 'freq (Hz),gain\n"1,000.0",0.3\n"2,00.0",0.2\n', ("line 3",)),
]

# (name, content) of Touchstone files that must be refused
BAD_TOUCHSTONE = [
    ("s1p_two_port", "# Hz S RI R 50\n1 0.1 0 0.2 0 0.3 0 0.4 0\n2 0.1 0 0.2 0 0.3 0 0.4 0\n"),
    ("s1p_truncated", "# Hz S RI R 50\n1 0.1 0\n2 0.1\n"),
    ("s1p_text", "# Hz S RI R 50\n1 0.1 0\n2 abc 0\n"),
    ("s1p_nan", "# Hz S RI R 50\n1 0.1 0\n2 nan 0\n"),
    ("s1p_inf", "# Hz S RI R 50\n1 0.1 0\n2 inf 0\n"),
    ("s1p_bad_option", "# Hz Q RI R 50\n1 0.1 0\n2 0.1 0\n"),
    ("s1p_descending", "# Hz S RI R 50\n2 0.1 0\n1 0.1 0\n"),
    ("s1p_no_data", "# Hz S RI R 50\n! nothing\n"),
    ("s1p_zero_freq", "# Hz S RI R 50\n0 0.1 0\n1 0.1 0\n"),
    ("s1p_one_point", "# Hz S RI R 50\n1 0.1 0\n"),
    ("s2p_z_params", "# Hz Z RI R 50\n" + "1 1 0 1 0 1 0 1 0\n2 1 0 1 0 1 0 1 0\n"),
    ("s3p", "# Hz S RI R 50\n1 " + "0 0 " * 9 + "\n"),
    (
        "v2_count_mismatch",
        "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 1\n"
        "[Number of Frequencies] 5\n[Network Data]\n1 0.1 0\n2 0.1 0\n[End]\n",
    ),
    ("v2_no_option", "[Version] 2.0\n[Number of Ports] 1\n[Network Data]\n1 0.1 0\n[End]\n"),
    ("v2_bad_ports", "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] two\n"),
]


def sweep_cases() -> list[Case]:
    """Each bad table and Touchstone file through ``inspect`` and ``fit``."""
    cases = []
    for name, content, says in BAD_SWEEPS:
        for command in ("inspect", "fit"):
            cases.append(
                Case(
                    f"{command}-{name}",
                    (command, "{bad}"),
                    {"bad.csv": content},
                    ("bad.csv", "fix", *says),
                )
            )
    for name, content in BAD_TOUCHSTONE:
        suffix = ".s2p" if name.startswith("s2p") else ".s1p"
        suffix = ".s3p" if name == "s3p" else suffix
        for command in ("inspect", "fit"):
            cases.append(
                Case(
                    f"{command}-{name}",
                    (command, "{tmp}/bad" + suffix),
                    {"bad" + suffix: content},
                    ("bad" + suffix, "fix"),
                )
            )
    cases += [
        Case("inspect-missing", ("inspect", "{tmp}/nothing.csv"), {}, ("nothing.csv", "fix")),
        Case(
            "inspect-folder",
            ("inspect", "{tmp}/folder.csv"),
            {"folder.csv/x": "1"},
            ("folder.csv", "folder"),
        ),
        Case("fit-missing", ("fit", "{tmp}/nothing.csv"), {}, ("nothing.csv", "fix")),
        Case(
            "inspect-duplicates-refused",
            ("inspect", "{bad}", "--duplicates", "refuse"),
            {"bad.csv": "freq (Hz),gain (dB)\n1,2\n1,3\n2,4\n"},
            ("line 3", "more than once"),
        ),
    ]
    return cases


# ---------------------------------------------------------------- column options
COLUMN_OPTIONS = [
    ("column_no_role", ("--column", "1:kHz"), ("--column",)),
    ("column_bad_role", ("--column", "frq=1"), ("--column", "freq")),
    ("column_empty", ("--column", "freq="), ("--column",)),
    ("column_missing", ("--column", "mag=Nope"), ("Nope", "fix")),
    ("column_position_out", ("--column", "freq=9"), ("9", "fix")),
    ("column_bad_unit", ("--column", "freq=1:ohm"), ("ohm", "fix")),
    ("column_unit_for_phase", ("--column", "phase=3:kHz"), ("kHz", "fix")),
    ("measures_unknown", ("--measures", "current"), ("--measures",)),
    ("measures_volts_with_db", ("--measures", "impedance", "--column", "mag=2:V"), ("fix",)),
    ("mag_and_real", ("--column", "mag=2", "--column", "real=3"), ("fix",)),
]


def column_cases() -> list[Case]:
    return [
        Case(f"inspect-{name}", ("inspect", "{S}", *args), {}, says)
        for name, args, says in COLUMN_OPTIONS
    ]


# ---------------------------------------------------------------- bench and fit options
FIT_OPTIONS = [
    ("sense_zero", ("--sense-r", "0"), ("--sense-r", "above 0")),
    ("sense_negative", ("--sense-r", "-47"), ("--sense-r", "above 0")),
    ("sense_nan", ("--sense-r", "nan"), ("--sense-r",)),
    ("sense_inf", ("--sense-r", "1e999"), ("--sense-r", "finite")),
    ("sense_text", ("--sense-r", "big"), ("--sense-r", "fix")),
    ("sense_wrong_unit", ("--sense-r", "47pF"), ("--sense-r",)),
    ("source_negative", ("--source-r", "-50"), ("--source-r",)),
    ("source_nan", ("--source-r", "NaN"), ("--source-r",)),
    ("probe_negative", ("--probe-c", "-15p"), ("--probe-c",)),
    ("probe_text", ("--probe-c", "lots"), ("--probe-c",)),
    ("z0_zero", ("--z0", "0"), ("--z0", "above 0")),
    ("feed_zero", ("--feed-r", "0"), ("--feed-r",)),
    ("feed_on_divider", ("--feed-r", "10k"), ("--feed-r", "across")),
    ("amplitude_no_form", ("--amplitude", "2"), ("--amplitude", "Vpp")),
    ("amplitude_zero", ("--amplitude", "0 Vpp"), ("--amplitude", "above 0")),
    ("amplitude_inf", ("--amplitude", "1e999 Vpp"), ("--amplitude",)),
    ("amplitude_on_ratio", ("--amplitude", "2 Vpp"), ("--amplitude", "ratio")),
    ("bench_unknown", ("--bench", "bridge"), ("--bench",)),
    ("bench_wrong_for_kind", ("--bench", "reflection"), ("fix",)),
    ("known_no_equals", ("--known", "L100u"), ("--known", "NAME=VALUE")),
    ("known_unknown_name", ("--known", "Q=5"), ("--known",)),
    ("known_twice", ("--known", "L=220u", "--known", "L=100u"), ("--known", "more than once")),
    ("known_negative_error", ("--known", "L=220u+--1u"), ("--known", "uncertainty")),
    ("known_negative", ("--known", "C=-1n"), ("--known", "positive")),
    ("known_nan", ("--known", "R=nan"), ("--known",)),
    ("known_text", ("--known", "L=lots"), ("--known",)),
    ("noise_text", ("--noise", "loud"), ("--noise", "fix")),
    ("noise_zero", ("--noise", "0dB"), ("--noise",)),
    ("noise_negative", ("--noise", "-1%"), ("--noise",)),
    ("noise_double_dot", ("--noise", "1..2"), ("--noise",)),
    ("noise_inf", ("--noise", "1e999dB"), ("--noise",)),
    ("noise_phase_only", ("--noise", "0.3deg"), ("--noise", "magnitude")),
    ("noise_two_additive", ("--noise", "1e-3,2e-3"), ("--noise",)),
    ("noise_model_typo", ("--noise", "additiv"), ("--noise", "fix")),
    ("model_sqrtf_typo", ("--model", "tank-sqrt"), ("--model",)),
    ("model_unknown", ("--model", "ladder"), ("--model",)),
    ("plot_missing_folder", ("--plot", "{tmp}/no/such/fit.png"), ("--plot", "mkdir")),
    ("plot_wrong_suffix", ("--plot", "{tmp}/fit.txt"), ("--plot", ".png")),
    ("plot_empty_name", ("--plot", ""), ("--plot", "file name")),
    ("plot_dot", ("--plot", "."), ("--plot", "directory")),
    ("plot_exists", ("--plot", "{tmp}/old.png"), ("old.png", "--force")),
    ("setup_missing", ("--setup", "{tmp}/none.toml"), ("none.toml", "--setup")),
    ("setup_folder", ("--setup", "{tmp}"), ("--setup",)),
]


def fit_option_cases() -> list[Case]:
    return [
        Case(f"fit-{name}", ("fit", "{S}", *args), {"old.png": b"x"}, says)
        for name, args, says in FIT_OPTIONS
    ]


# ---------------------------------------------------------------- setup files
BAD_SETUPS = [
    ("not_toml", "bench = [\n", ("not a valid TOML",)),
    ("bench_number", "bench = 1\n", ("[bench]", "table")),
    ("bench_string", 'bench = "divider"\n', ("[bench]", "table")),
    ("columns_number", "columns = 5\n", ("[columns]", "table")),
    ("known_list", "known = [1, 2]\n", ("[known]", "table")),
    ("unknown_section", "[bnch]\nsense_resistor = 47\n", ("bnch", "bench")),
    ("misspelt_key", '[bench]\nsense_resistr = "47"\n', ("sense_resistr", "sense_resistor")),
    ("unknown_known", '[known]\nQ = "5"\n', ("Q", "fix")),
    ("sense_nan", "[bench]\nsense_resistor = nan\n", ("sense_resistor",)),
    ("sense_inf", "[bench]\nsense_resistor = inf\n", ("sense_resistor",)),
    ("sense_negative", "[bench]\nsense_resistor = -47\n", ("sense_resistor", "above 0")),
    ("sense_text", '[bench]\nsense_resistor = "lots"\n', ("sense_resistor",)),
    ("probe_negative", '[bench]\nprobe_capacitance = "-15p"\n', ("probe_capacitance",)),
    ("arrangement_unknown", '[bench]\narrangement = "bridge"\n', ("bridge", "fix")),
    ("relative_text", '[bench]\nrelative = "yes"\n', ("relative", "true")),
    ("amplitude_no_form", '[bench]\ngenerator_amplitude = "2"\n', ("amplitude", "Vpp")),
    ("known_negative", '[known]\nL = "-1u"\n', ("known", "positive")),
    ("columns_bad_role", '[columns]\nfrq = "1"\n', ("frq", "fix")),
    ("columns_bad_kind", '[columns]\nkind = "current"\n', ("current", "fix")),
    ("columns_bad_unit", '[columns]\nfreq = "1:ohm"\n', ("ohm", "fix")),
    ("files_not_table", 'files = "x"\n', ("[files]", "table")),
    ("files_pattern_not_table", '[files]\n"*.csv" = 3\n', ('files."*.csv"', "table")),
    ("files_unknown_key", '[files."*.csv".bench]\nsense = "47"\n', ("sense", "sense_resistor")),
    (
        "files_two_patterns",
        '[files."*.csv".bench]\nsense_resistor = "47"\n[files."s*".bench]\nsense_resistor = "22"\n',
        ("more than one", "exclusive"),
    ),
    ("utf16", '[bench]\nsense_resistor = "47"\n'.encode("utf-16"), ("UTF-8",)),
]


def setup_cases() -> list[Case]:
    """Each bad setup file given with --setup, and found beside the sweep."""
    cases = []
    for name, content, says in BAD_SETUPS:
        cases.append(
            Case(
                f"setup-{name}",
                ("fit", "{tmp}/sweep.csv", "--setup", "{tmp}/bench.toml"),
                {"bench.toml": content, "sweep.csv": GOOD},
                ("bench.toml", *says),
            )
        )
    for name, content, says in BAD_SETUPS[:6]:
        cases.append(
            Case(
                f"setup-beside-{name}",
                ("fit", "{tmp}/sweep.csv"),
                {"fitkit-setup.toml": content, "sweep.csv": GOOD},
                ("fitkit-setup.toml", *says),
            )
        )
    return cases


# ---------------------------------------------------------------- specification files
BAD_SPECS = [
    ("not_toml", "[L\n", ("not a valid TOML",)),
    ("empty", "", ("no limits",)),
    ("rule_string", 'rule = "simple"\n[L]\nmin = "1u"\n', ("rule", "table")),
    ("rule_misspelt", '[rule]\ndecison = "simple"\n[L]\nmin = "1u"\n', ("decison", "decision")),
    ("rule_unknown", '[rule]\ndecision = "lenient"\n[L]\nmin = "1u"\n', ("lenient", "fix")),
    ("coverage_nan", '[rule]\ncoverage = nan\n[L]\nmin = "1u"\n', ("coverage",)),
    ("coverage_inf", '[rule]\ncoverage = inf\n[L]\nmin = "1u"\n', ("coverage",)),
    ("coverage_negative", '[rule]\ncoverage = -1\n[L]\nmin = "1u"\n', ("coverage",)),
    ("coverage_text", '[rule]\ncoverage = "two"\n[L]\nmin = "1u"\n', ("coverage",)),
    ("unknown_value", '[Lx]\nmin = "1u"\n', ("[Lx]", "[L]")),
    ("value_not_table", 'L = "220u"\n', ("[L]", "table")),
    ("limit_misspelt", '[L]\nnominl = "220u"\ntolerance = "5%"\n', ("nominl", "nominal")),
    ("nominal_nan", '[L]\nnominal = nan\ntolerance = "5%"\n', ("[L]",)),
    ("min_inf", "[C]\nmin = -inf\n", ("[C]",)),
    ("max_text", '[C]\nmax = "big"\n', ("[C]", "big")),
    ("tolerance_nan", '[L]\nnominal = "220u"\ntolerance = "nan%"\n', ("[L]", "tolerance")),
    ("tolerance_no_nominal", '[L]\ntolerance = "5%"\n', ("[L]", "nominal")),
    ("min_above_max", '[C]\nmin = "2n"\nmax = "1n"\n', ("[C]", "swap")),
    ("q_text", '[Q]\nmin = "high"\n', ("[Q]", "high")),
    ("no_limits", "[L]\n", ("[L]", "no limits")),
]


def spec_cases() -> list[Case]:
    """Each bad spec through ``batch`` (read before any fitting) and ``drift``."""
    cases = []
    for name, content, says in BAD_SPECS:
        cases.append(
            Case(
                f"batch-spec-{name}",
                ("batch", "{S}", "--out", "{tmp}/out", "--spec", "{tmp}/spec.toml"),
                {"spec.toml": content},
                ("spec.toml", *says),
            )
        )
    for name, content, says in BAD_SPECS[:8]:
        cases.append(
            Case(
                f"drift-spec-{name}",
                ("drift", "{S}", "--spec", "{tmp}/spec.toml"),
                {"spec.toml": content},
                ("spec.toml", *says),
            )
        )
    return cases


# ---------------------------------------------------------------- other commands
PREDICT = (
    "predict",
    "--value",
    "R=5",
    "--value",
    "L=220u",
    "--value",
    "C=1n",
    "--placement",
    "series",
    "--chain-source-r",
    "50",
    "--chain-load-r",
    "50",
)
OTHER = [
    (
        "batch-coverage-nan",
        ("batch", "{S}", "--out", "{tmp}/o", "--coverage", "nan"),
        ("--coverage", "finite"),
    ),
    (
        "batch-coverage-inf",
        ("batch", "{S}", "--out", "{tmp}/o", "--coverage", "inf"),
        ("--coverage", "finite"),
    ),
    (
        "batch-coverage-negative",
        ("batch", "{S}", "--out", "{tmp}/o", "--coverage", "-1"),
        ("--coverage",),
    ),
    ("batch-sense-bad", ("batch", "{S}", "--out", "{tmp}/o", "--sense-r", "0"), ("--sense-r",)),
    ("batch-noise-bad", ("batch", "{S}", "--out", "{tmp}/o", "--noise", "loud"), ("--noise",)),
    (
        "batch-resume-force",
        ("batch", "{S}", "--out", "{tmp}/o", "--resume", "--force"),
        ("--resume", "--force"),
    ),
    (
        "batch-known-twice",
        ("batch", "{S}", "--out", "{tmp}/o", "--known", "L=1u", "--known", "L=2u"),
        ("--known",),
    ),
    ("drift-nominal-negative", ("drift", "{S}", "--nominal", "f0=-1k"), ("--nominal", "above 0")),
    ("drift-nominal-zero", ("drift", "{S}", "--nominal", "C=0"), ("--nominal", "above 0")),
    ("drift-nominal-text", ("drift", "{S}", "--nominal", "Q=abc"), ("--nominal", "abc")),
    ("drift-nominal-nan", ("drift", "{S}", "--nominal", "L=nan"), ("--nominal",)),
    ("drift-nominal-unknown", ("drift", "{S}", "--nominal", "X=1"), ("--nominal", "NAME")),
    ("drift-no-reference", ("drift", "{S}"), ("reference", "--against")),
    (
        "drift-two-references",
        ("drift", "{S}", "--against", "{S}", "--nominal", "C=1n"),
        ("--against",),
    ),
    ("drift-noise-bad", ("drift", "{S}", "--nominal", "C=1n", "--noise", "x"), ("--noise",)),
    (
        "plan-points-huge",
        (
            "plan",
            "--noise",
            "1e-3",
            "--l",
            "100u",
            "--c",
            "1n",
            "--r",
            "5",
            "--points",
            "100000000",
        ),
        ("--points",),
    ),
    (
        "plan-points-one",
        (
            "plan",
            "--noise",
            "1e-3",
            "--sense-r",
            "47",
            "--l",
            "100u",
            "--c",
            "1n",
            "--r",
            "5",
            "--points",
            "1",
        ),
        ("points", "fix"),
    ),
    (
        "plan-l-text",
        ("plan", "--noise", "1e-3", "--sense-r", "47", "--l", "lots", "--c", "1n", "--r", "5"),
        ("fix",),
    ),
    (
        "plan-setup-bad",
        (
            "plan",
            "--noise",
            "1e-3",
            "--l",
            "100u",
            "--c",
            "1n",
            "--r",
            "5",
            "--setup",
            "{tmp}/b.toml",
        ),
        ("b.toml", "table"),
    ),
    ("predict-band-reversed", (*PREDICT, "--band", "1602k..531k"), ("--band", "531k..1602k")),
    ("predict-c-range-reversed", (*PREDICT, "--c-range", "500p..20p"), ("--c-range", "20p..500p")),
    ("predict-band-no-dots", (*PREDICT, "--band", "531k-1602k"), ("--band", "LOW..HIGH")),
    (
        "predict-carrier-level-nan",
        (*PREDICT, "--wanted", "339k", "--carrier", "+9k,nan"),
        ("carrier level", "fix"),
    ),
    (
        "predict-carrier-level-inf",
        (*PREDICT, "--wanted", "339k", "--carrier", "+9k,inf"),
        ("carrier level",),
    ),
    (
        "predict-carrier-file-png",
        (*PREDICT, "--wanted", "339k", "--carrier-file", "{tmp}/c.png"),
        ("c.png", "UTF-8"),
    ),
    (
        "predict-carrier-file-utf16",
        (*PREDICT, "--wanted", "339k", "--carrier-file", "{tmp}/c16.txt"),
        ("c16.txt", "fix"),
    ),
    ("predict-value-twice", (*PREDICT, "--value", "C=2n"), ("C", "fix")),
    ("predict-plot-missing-folder", (*PREDICT, "--plot", "{tmp}/x/p.png"), ("--plot", "mkdir")),
    (
        "report-out-missing-folder",
        ("report", "{S}", "--out", "{tmp}/no/r.html"),
        ("--out", "mkdir"),
    ),
    ("report-out-wrong-suffix", ("report", "{S}", "--out", "{tmp}/r.png"), ("--out", ".html")),
]


def other_cases() -> list[Case]:
    files = {
        "b.toml": "bench = 1\n",
        "c.png": b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\xff\xfe\x00",
        "c16.txt": "+9k,+6\n".encode("utf-16"),
    }
    return [Case(name, args, files, says) for name, args, says in OTHER]


CASES = sweep_cases() + column_cases() + fit_option_cases() + setup_cases() + spec_cases()
CASES += other_cases()
