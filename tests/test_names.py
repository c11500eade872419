"""One set of names: a fit's values carry the names of docs/names.md everywhere, old
spellings typed by a user work with a one-line note, and results saved by the version
before the rename (tests/saved_before_names/, written by it: ``f0_hz``, ``stderr``,
``redchi``) still load in show, predict, drift and report."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main
from fitkit.errors import InputError
from fitkit.names import OLD_NAMES, QUANTITIES, OldNameWarning
from fitkit.result import Quantity, load_fit
from fitkit.spec import load_spec

ROOT = Path(__file__).resolve().parent.parent
BEFORE = Path(__file__).resolve().parent / "saved_before_names"
DRIFT = ROOT / "sample_sweeps" / "drift"
SERIES = ROOT / "sample_sweeps" / "hand_wound_series" / "sweep.csv"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def _raw(name: str) -> dict:
    return json.loads((BEFORE / name).read_text(encoding="utf-8"))


def test_docs_table_lists_every_name_with_its_unit():
    table = (ROOT / "docs" / "names.md").read_text(encoding="utf-8")
    for name, (unit, label) in QUANTITIES.items():
        row = f"| `{name}` | {unit or '(none)'} | {label} |"
        assert row in table, row
    for old in OLD_NAMES:
        assert f"`{old}`" in table, old


def test_json_uses_todays_names_and_u(tmp_path):
    made = run("fit", SERIES, "--json")
    data = json.loads(made.stdout)
    assert data["format"] == 2
    assert set(data["derived"]) <= set(QUANTITIES)
    assert {"f0", "bandwidth", "loaded_bandwidth"} <= set(data["derived"])
    assert all(set(e) >= {"value", "u", "unit"} for e in data["values"].values())
    assert '"stderr"' not in made.stdout
    assert "reduced_chi_square" in data["fit"]


@pytest.mark.parametrize("saved", ["reference-before.json", "coil-before.json"])
def test_a_fit_saved_before_loads_with_its_values(saved):
    raw = _raw(saved)
    fit = load_fit(BEFORE / saved)
    old_entries = {**raw["values"], **raw["derived"]}
    assert len(fit.quantities) == len(old_entries)
    for old, entry in old_entries.items():
        q = fit[OLD_NAMES.get(old, old)]
        assert (q.value, q.stderr) == (entry["value"], entry["stderr"])
    assert fit.stats.redchi == raw["fit"]["redchi"]
    assert fit.covariance_names == [OLD_NAMES.get(n, n) for n in raw["covariance"]["names"]]


def test_show_prints_an_old_fit_as_a_new_one(tmp_path, monkeypatch):
    # the same sweep saved in today's layout and in the one before: the same table
    sweep = tmp_path / "reference.csv"
    sweep.write_bytes((DRIFT / "reference.csv").read_bytes())
    (tmp_path / "fitkit-setup.toml").write_bytes((DRIFT / "fitkit-setup.toml").read_bytes())
    new = tmp_path / "new.json"
    monkeypatch.chdir(tmp_path)
    made = CliRunner().invoke(main, ["fit", "reference.csv", "--json"], catch_exceptions=False)
    new.write_text(made.stdout)
    old_table, new_table = run("show", BEFORE / "reference-before.json"), run("show", new)
    assert old_table.exit_code == 0, old_table.output
    assert old_table.stdout.splitlines()[1:] == new_table.stdout.splitlines()[1:]
    assert "f0 (resonance)                   454.9169 kHz +/- 0.0064 kHz" in old_table.stdout


def test_drift_against_an_old_reference_finds_no_change_in_its_own_sweep():
    # the reference sweep fitted again is the reference: every z is 0 (the same sweep)
    done = run("drift", DRIFT / "reference.csv", "--against", BEFORE / "reference-before.json",
               "--json")  # fmt: skip
    assert done.exit_code == 0, done.output
    changes = json.loads(done.stdout)["changes"]
    assert {"R", "L", "C", "f0", "Q", "Q_loaded"} <= set(changes)
    # (the saved fit came from the engine before the closed-form Jacobian, which stopped
    # within about 1e-5 of a standard uncertainty of the minimum this one reaches)
    assert all(c["z"] == pytest.approx(0.0, abs=1e-4) for c in changes.values())


def test_predict_from_an_old_fit_gives_what_the_old_version_saved():
    old = _raw("prediction-before.json")
    done = run("predict", "--saved-fit", BEFORE / "reference-before.json", "--wanted", "455k",
               "--carrier", "+10k", "--carrier", "-10k", "--json")  # fmt: skip
    new = json.loads(done.stdout)
    assert new["Q_loaded"]["value"] == pytest.approx(old["q_loaded"]["value"], rel=1e-12)
    for a, b in zip(new["carriers"], old["carriers"]):
        assert a["rejection_db"]["u"] == pytest.approx(b["rejection_db"]["stderr"], rel=1e-12)


@pytest.mark.parametrize("saved", ["prediction-before.json", "drift-before.json"])
def test_show_prints_an_old_prediction_or_drift(saved):
    shown = run("show", BEFORE / saved)
    assert shown.exit_code == 0, shown.output
    if saved.startswith("drift"):
        # labels and units from today's table, not the old keys
        assert "f0 (resonance)                   454.9169 kHz +/- 0.0064 kHz" in shown.stdout
        assert "f0_hz" not in shown.stdout
    else:
        assert "loaded Q 34." in shown.stdout


def test_report_of_an_old_fit_and_against_an_old_reference(tmp_path):
    page = tmp_path / "fit.html"
    assert run("report", BEFORE / "coil-before.json", "--out", page).exit_code == 0
    text = page.read_text(encoding="utf-8")
    assert "f self (coil self-resonance)" in text and "28.1432 MHz" in text
    drift = tmp_path / "drift.html"
    done = run("report", DRIFT / "drifted.csv", "--against", BEFORE / "reference-before.json",
               "--out", drift)  # fmt: skip
    assert done.exit_code == 0, done.output
    assert "f0 (resonance)" in drift.read_text(encoding="utf-8")


_SPEC = """[rule]
decision = "guarded"

[L]
nominal = "680u"
tolerance = "5%"

[{f0}]
nominal = "455k"
tolerance = "1%"
"""


def test_old_spec_key_works_with_a_note_naming_file_and_line(tmp_path):
    old, new = tmp_path / "old.toml", tmp_path / "new.toml"
    old.write_text(_SPEC.format(f0="f0_hz"))
    new.write_text(_SPEC.format(f0="f0"))
    with pytest.warns(OldNameWarning, match=rf"{re.escape(str(old))}, line 8: 'f0_hz' .* 'f0'"):
        read = load_spec(old)
    assert read.limits == load_spec(new).limits


def test_old_and_new_spec_key_together_are_refused(tmp_path):
    spec = tmp_path / "both.toml"
    spec.write_text(_SPEC.format(f0="f0") + '\n[f0_hz]\nnominal = "455k"\ntolerance = "1%"\n')
    with pytest.warns(OldNameWarning), pytest.raises(InputError, match="given twice") as err:
        load_spec(spec)
    assert err.value.path == str(spec)


def test_cli_note_is_one_line_on_stderr_and_the_target_still_works():
    args = ("plan", "--r", "5", "--l", "100u", "--c", "1n", "--bench", "impedance",
            "--noise", "1e-3", "--target")  # fmt: skip
    old, new = run(*args, "BL=1%"), run(*args, "loaded_bandwidth=1%")
    assert old.exit_code == new.exit_code == 0
    assert old.stdout == new.stdout
    assert old.stderr == (
        "note: --target: 'BL' is the old name of 'loaded_bandwidth'; write "
        "'loaded_bandwidth' (the old name still works for now)\n"
    )
    assert new.stderr == ""


def test_nominal_takes_an_old_name_with_a_note():
    old = run("drift", DRIFT / "drifted.csv", "--nominal", "f0_hz=455k")
    new = run("drift", DRIFT / "drifted.csv", "--nominal", "f0=455k")
    assert old.stdout == new.stdout and "f0 (resonance)" in new.stdout
    assert "'f0_hz' is the old name of 'f0'" in old.stderr


def test_old_batch_results_are_read_in_todays_names(tmp_path):
    from fitkit.batch_results import load_results

    old = {"rows": [{"file": "a.csv", "f0_hz": 455e3, "f0_hz_u": 6.0, "L": 1e-3, "L_u": 1e-6}],
           "statistics": {"f0_hz": {"n": 1}},
           "stand_out": [{"file": "a.csv", "value": "f0_hz", "x": 455e3, "z": 4.0}]}  # fmt: skip
    (tmp_path / "results.json").write_text(json.dumps(old))
    data = load_results(tmp_path)
    assert data["rows"][0] == {"file": "a.csv", "f0": 455e3, "f0_u": 6.0, "L": 1e-3, "L_u": 1e-6}
    assert list(data["statistics"]) == ["f0"] and data["stand_out"][0]["value"] == "f0"


def test_interval_ends_carry_the_digits_of_the_uncertainty():
    # two significant digits of the uncertainty fix the last digit printed (JCGM 100:2008,
    # GUM 7.2.6, from memory); the ends of the interval are printed to the same digit
    q = Quantity("f0", 336_471.8, 210.0, interval=(336_102.0, 336_905.0))
    assert q.text() == "336.47 kHz +/- 0.21 kHz (68% interval 336.10 kHz to 336.90 kHz)"
