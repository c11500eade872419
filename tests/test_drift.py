"""Drift diagnosis: changes with combined uncertainty, and the plain-words reading."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main
from fitkit.cli.drift_cmd import drift_lines
from fitkit.drift import Change, Side, compare, corrections, reading

DRIFT = Path(__file__).resolve().parent.parent / "sample_sweeps" / "drift"
VOLTS = DRIFT.parent / "single_channel_volts" / "sweep.csv"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def series_values(r, l_h, c_f, rel_u=1e-4):
    """Exact series R-L-C values (f0 = 1/(2 pi sqrt(LC)), Q = sqrt(L/C)/R) with small u."""
    f0 = 1 / (2 * math.pi * math.sqrt(l_h * c_f))
    q = math.sqrt(l_h / c_f) / r
    return {k: (v, abs(v) * rel_u) for k, v in
            {"R": r, "L": l_h, "C": c_f, "f0": f0, "Q": q}.items()}  # fmt: skip


def test_combined_uncertainty_of_independent_fits():
    # GUM (JCGM 100:2008), law of propagation for d = x - x_ref, independent: u^2 = u1^2 + u2^2
    c = Change("L", 100.0, 3.0, 110.0, 4.0)
    assert c.u == pytest.approx(5.0)
    assert c.z == pytest.approx(2.0) and not c.significant
    assert Change("L", 100.0, 3.0, 110.1, 4.0).significant
    assert c.relative == pytest.approx(0.1)


def test_grown_capacitor_is_named_and_the_rest_within_uncertainty():
    ref = series_values(10.0, 1e-3, 2.2e-9)
    now = series_values(10.0, 1e-3, 2.2e-9 * 1.06)
    lines = reading(compare(now, ref))
    # f0 ~ 1/sqrt(LC): 1.06**-0.5 - 1 = -2.87 %; Q ~ sqrt(L/C) moves the same way
    assert lines[0] == (
        "f0 down 2.9%, Q down 2.9%: C has grown by about 6.0%; R and L within their uncertainty"
    )
    assert "implies f0 -2.9%" in lines[1] and "measured -2.9%" in lines[1]


def test_grown_loss_leaves_f0_unchanged():
    lines = reading(compare(series_values(12.0, 1e-3, 2.2e-9), series_values(10.0, 1e-3, 2.2e-9)))
    assert lines[0].startswith("f0 unchanged, Q down 16.7%: R has grown by about 20.0%")


def test_relative_sweeps_say_what_cannot_be_concluded():
    ref = {"f0": (500e3, 50.0), "Q_loaded": (3.2, 0.004)}
    now = {"f0": (485e3, 50.0), "Q_loaded": (3.2, 0.004)}
    text = " ".join(reading(compare(now, ref)))
    # 1/(1 - 0.03)^2 - 1 = +6.28 %
    assert "f0 down 3.0%, loaded Q unchanged" in text
    assert "L*C has grown by about 6.3%" in text
    assert "cannot tell whether L or C changed" in text and "--known" in text


def test_drift_command_on_the_sample_pair():
    # sample_sweeps/make_kits.py: the same unit, its capacitor 6 % larger
    result = run("drift", DRIFT / "drifted.csv", "--against", DRIFT / "reference.csv")
    assert result.exit_code == 0, result.output
    assert f"now       {DRIFT / 'drifted.csv'}" in result.output
    assert f"reference {DRIFT / 'reference.csv'}" in result.output
    assert "f0 down 2.9%" in result.output
    assert "C has grown by about 6." in result.output
    assert "R within its uncertainty" in result.output
    row = next(line for line in result.output.splitlines() if line.strip().startswith("C "))
    assert "change     +10.9" in row and " pF +/- 0.0" in row  # the absolute change, with u
    assert "to restore: C has grown by 10.9" in result.output
    assert "put about 3.1" in result.output and "nF in series with it" in result.output


def test_a_shrunk_capacitor_takes_the_difference_across_it():
    # parallel capacitances add; series ones add as reciprocals (any circuits text)
    shrunk = Change("C", 200e-12, 0.1e-12, 183.8e-12, 0.1e-12)
    (line,) = corrections([shrunk])
    assert line.endswith("add about 16.2 pF across it")
    assert "-8.100% +/- 0.071%" in line
    grown = Change("C", 180e-12, 0.04e-12, 190.9e-12, 0.04e-12)
    series = 190.9e-12 * 180e-12 / (190.9e-12 - 180e-12)  # 3.152 nF restores 180 pF
    assert f"put about {series * 1e9:.3g} nF in series" in corrections([grown])[0]
    assert not corrections([Change("C", 180e-12, 1e-12, 181e-12, 1e-12)])  # z = 0.7


def test_coil_corrections_in_turns_and_slug_direction():
    # L ~ N^2 for a fixed winding (common practice): +4 % L is 2 % too many turns
    grown = corrections([Change("L", 100e-6, 0.1e-6, 104.04e-6, 0.1e-6)])[0]
    assert "turn it out" in grown and "take off about 2% of its turns" in grown
    shrunk = corrections([Change("L", 100e-6, 0.1e-6, 96.04e-6, 0.1e-6)])[0]
    assert "turn it further in" in shrunk and "add about 2% more turns" in shrunk


def test_doubtful_marks_and_fit_warnings_reach_the_printout_and_json(tmp_path):
    saved = json.loads(run("fit", DRIFT / "reference.csv", "--json").output)
    saved["fit"]["warnings"] = ["the scatter grows with the reading: state the noise as relative"]
    path = tmp_path / "warned.json"
    path.write_text(json.dumps(saved))
    printed = run("drift", DRIFT / "drifted.csv", "--against", path)
    assert printed.exit_code == 0, printed.output
    assert f"warning (reference, {path}): the scatter grows" in printed.output
    data = json.loads(run("drift", DRIFT / "drifted.csv", "--against", path, "--json").output)
    assert data["reference"]["warnings"] == saved["fit"]["warnings"]
    assert data["reference"]["source"] == str(path)
    assert data["unit"]["source"] == str(DRIFT / "drifted.csv")
    now = Side("a.csv", {"C": (1.1e-9, 1e-12)}, (), {"C": "the fit hit a bound"})
    (change,) = compare(now, Side("b.csv", {"C": (1e-9, 1e-12)}))
    assert change.doubtful == "now: the fit hit a bound"
    assert change.to_dict()["doubtful"] == "now: the fit hit a bound"
    lines = drift_lines(now, Side("b.csv", {"C": (1e-9, 1e-12)}), [change], [], [])
    assert lines[3].endswith("  doubtful")
    assert "  doubtful: C: now: the fit hit a bound" in lines


def test_drift_against_a_saved_fit_and_as_json(tmp_path):
    saved = tmp_path / "ref.json"
    saved.write_text(run("fit", DRIFT / "reference.csv", "--json").output)
    result = run("drift", DRIFT / "drifted.csv", "--against", saved, "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    c = data["changes"]["C"]
    assert c["relative"] == pytest.approx(0.06, abs=0.005)
    assert c["change"] == pytest.approx(c["value"] - c["reference"])
    assert any(line.startswith("C has grown by") for line in data["corrections"])
    assert c["change_u"] == pytest.approx(math.hypot(c["value_u"], c["reference_u"]))
    assert c["significant"] is True


def test_drift_against_nominals_of_a_relative_sweep():
    result = run("drift", VOLTS, "--nominal", "f0=510k", "--nominal", "Q_loaded=3.2")
    assert result.exit_code == 0, result.output
    assert "cannot tell whether L or C changed" in result.output
    assert "reference nominal values (--nominal)" in result.output


@pytest.mark.parametrize(
    "args",
    [(), ("--against", VOLTS, "--nominal", "C=1n"), ("--nominal", "X=1"), ("--nominal", "C=zz")],
)
def test_drift_needs_one_good_reference(args):
    result = run("drift", DRIFT / "drifted.csv", *args)
    assert result.exit_code == 2
    assert "fix:" in result.output
