"""Specification files and the decision rules.

The rules checked here follow ILAC-G8:09/2019 (simple acceptance; guarded acceptance with
the guard band w = k u) and ISO 14253-1:2017 (conformance zone shrunk by the expanded
uncertainty), both from memory; the expected verdicts are worked by hand.
"""

from __future__ import annotations

import pytest

from fitkit.errors import InputError
from fitkit.spec import NOT_DETERMINED, Limit, Spec, decide, judge, load_spec

L_LIMIT = Limit("L", "L", "H", 209e-6, 231e-6, 220e-6)
GUARDED = Spec((L_LIMIT,), "guarded", 2.0)
SIMPLE = Spec((L_LIMIT,), "simple", 2.0)


@pytest.mark.parametrize(
    ("value", "u", "guarded", "simple"),
    [
        (220e-6, 1e-6, "pass", "pass"),  # 218..222 well inside
        (229e-6, 1e-6, "pass", "pass"),  # 227..231 touches the limit: still inside
        (230e-6, 1e-6, "undecided", "pass"),  # 228..232 straddles 231
        (232e-6, 1e-6, "undecided", "fail"),  # 230..234 straddles 231
        (234e-6, 1e-6, "fail", "fail"),  # 232..236 wholly above
        (208e-6, 0.4e-6, "fail", "fail"),  # 207.2..208.8 wholly below 209
        (209.5e-6, 0.4e-6, "undecided", "pass"),  # 208.7..210.3 straddles 209
    ],
)
def test_guarded_and_simple_rules_worked_by_hand(value, u, guarded, simple):
    assert decide(value, u, L_LIMIT, GUARDED).word == guarded
    assert decide(value, u, L_LIMIT, SIMPLE).word == simple


def test_coverage_factor_widens_the_guard_band():
    assert decide(229e-6, 1e-6, L_LIMIT, Spec((L_LIMIT,), "guarded", 1.0)).word == "pass"
    assert decide(229e-6, 1e-6, L_LIMIT, Spec((L_LIMIT,), "guarded", 3.0)).word == "undecided"


def test_undetermined_value_is_undecided_under_both_rules():
    for spec in (GUARDED, SIMPLE):
        assert decide(None, None, L_LIMIT, spec).text() == NOT_DETERMINED


def test_overall_verdict_fail_beats_undecided_beats_pass():
    c = Limit("C", "C", "F", 0.9e-9, 1.1e-9)
    spec = Spec((L_LIMIT, c), "guarded", 2.0)
    ok = {"L": (220e-6, 1e-7), "C": (1e-9, 1e-12)}
    assert judge(ok, spec).overall == "pass"
    assert judge({**ok, "C": (None, None)}, spec).overall == "undecided"
    assert judge({"L": (230e-6, 1e-6), "C": (2e-9, 1e-12)}, spec).overall == "fail"


def test_spec_file_layout(tmp_path):
    path = tmp_path / "spec.toml"
    path.write_text(
        '[rule]\ndecision = "simple"\n'
        '[L]\nnominal = "220u"\ntolerance = "5%"\n'
        '[C]\nmin = "950pF"\nmax = "1.05n"\n'
        '[f0]\nnominal = "340k"\ntolerance = "2k"\n'
        "[Q]\nmin = 30\n"
    )
    spec = load_spec(path)
    limits = {lim.name: lim for lim in spec.limits}
    assert spec.rule == "simple"
    assert limits["L"].low == pytest.approx(209e-6) and limits["L"].high == pytest.approx(231e-6)
    assert limits["C"].low == pytest.approx(950e-12) and limits["C"].high == pytest.approx(1.05e-9)
    assert (limits["f0"].quantity, limits["f0"].low) == ("f0", pytest.approx(338e3))
    assert limits["Q"].low == 30 and limits["Q"].high is None
    assert spec.nominals() == {"L": pytest.approx(220e-6), "f0": pytest.approx(340e3)}
    assert "ILAC-G8:09/2019" in spec.rule_text()
    assert "ISO 14253-1:2017" in spec.with_rule("guarded", 3).rule_text()


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("[X]\nmin = 1\n", "[X] is not a value"),
        ('[L]\nnominal = "220u"\nspread = 1\n', "unknown key(s) spread"),
        ('[L]\ntolerance = "5%"\n', "a tolerance needs a nominal"),
        ('[L]\nnominal = "22zz"\ntolerance = "5%"\n', "cannot read L nominal"),
        ('[C]\nmin = "2n"\nmax = "1n"\n', "is above max"),
        ('[rule]\ndecision = "lenient"\n[L]\nmin = 1\n', "not a known rule"),
        ("[rule]\ncoverage = -1\n[L]\nmin = 1\n", "coverage"),
        ("", "gives no limits"),
        ("[L\n", "not a valid TOML specification file"),
    ],
)
def test_bad_spec_names_the_file_and_the_fix(tmp_path, text, words):
    path = tmp_path / "bad-spec.toml"
    path.write_text(text)
    with pytest.raises(InputError, match="fix:") as err:
        load_spec(path)
    assert words in str(err.value)
    assert "bad-spec.toml" in str(err.value)


def test_tank_and_coil_values_can_be_specified(tmp_path):
    spec_file = tmp_path / "spec.toml"
    spec_file.write_text('[R_dynamic]\nmin = "50k"\n\n[f_self]\nmin = "20meg"\n')
    spec = load_spec(spec_file)
    verdicts = judge({"R_dynamic": (58.5e3, 40.0)}, spec)
    assert verdicts.values["R_dynamic"].word == "pass"
    # a unit fitted with a model that has no self-resonance: not determined, so undecided
    assert verdicts.values["f_self"].text().startswith("undecided")


@pytest.mark.parametrize(
    ("value", "u", "rule", "expected"),
    [
        # half a nanohenry over 493.5 uH: the digits must show it (one past where they differ)
        (493.5005e-6, 0.13e-6, "simple", "fail (493.50050 uH above the limit 493.50000 uH)"),
        (
            493.5005e-6,
            0.13e-6,
            "guarded",
            "undecided (493.50050 uH +/- 0.26 uH (k = 2) straddles the limit 493.50000 uH)",
        ),
        # far outside: the uncertainty sets the digits, the limit printed to the same
        (
            2.44283e-9,
            0.0007e-9,
            "guarded",
            "fail (2.4428 nF +/- 0.0014 nF (k = 2) above the limit 2.3100 nF)",
        ),  # fmt: skip
        (2.0e-9, None, "simple", "fail (2.000 nF below the limit 2.090 nF)"),
    ],
)
def test_verdicts_print_enough_digits_to_show_the_side_of_the_limit(value, u, rule, expected):
    # 470 uH +- 5 % and 2.2 nF +- 5 % (worked by hand)
    unit, limits = ("H", (446.5e-6, 493.5e-6)) if value > 1e-7 else ("F", (2.09e-9, 2.31e-9))
    lim = Limit("X", "X", unit, *limits)
    text = decide(value, u, lim, Spec((lim,), rule)).text()
    assert text == expected
    shown, edge = (float(x.split()[0]) for x in (text.split("(")[1], text.split("limit ")[1]))
    assert (shown > edge) == (value > limits[1])  # the printed numbers show the side


def test_the_printed_rule_names_its_sources_without_saying_from_memory():
    for rule in ("simple", "guarded"):
        text = Spec((L_LIMIT,), rule).rule_text()
        assert "ILAC-G8:09/2019" in text and "memory" not in text
