"""fitkit batch: every input gets a row, verdicts, statistics, nothing lost or overwritten."""

from __future__ import annotations

import csv
import json
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

import fitkit.batch as batch
import fitkit.batch_results as results
from fitkit.cli import main
from fitkit.result import QUANTITIES

KITS = Path(__file__).resolve().parent.parent / "sample_sweeps" / "kits"
SPEC = KITS / "spec.toml"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def rows_by_name(out: Path) -> dict:
    data = json.loads((out / "results.json").read_text())
    return {Path(r["file"]).name: r for r in data["rows"]}


def test_kits_batch_gives_every_file_a_row_and_a_verdict(tmp_path):
    out = tmp_path / "out"
    result = run("batch", KITS, "--spec", SPEC, "--out", out, "--workers", "2")
    assert result.exit_code == 0, result.output
    rows = rows_by_name(out)
    assert sorted(rows) == [f"kit-{n:02d}.csv" for n in range(1, 13)]
    # the made-up scenario (sample_sweeps/make_kits.py): kit 07 capacitor 11 % high,
    # kit 04 coil exactly on its +5 % limit, kit 10 file cut short
    assert rows["kit-07.csv"]["verdict"] == "fail"
    assert rows["kit-07.csv"]["C_verdict"].startswith("fail (")
    assert "above the limit 2.3100 nF" in rows["kit-07.csv"]["C_verdict"]
    assert rows["kit-04.csv"]["verdict"] == "undecided"
    assert "straddles the limit" in rows["kit-04.csv"]["L_verdict"]
    assert rows["kit-10.csv"]["status"] == "failed"
    assert "kit-10.csv" in rows["kit-10.csv"]["reason"]
    assert "fix:" in rows["kit-10.csv"]["reason"]
    others = [r for n, r in rows.items() if n not in ("kit-04.csv", "kit-07.csv", "kit-10.csv")]
    assert all(r["verdict"] == "pass" for r in others)
    with (out / "results.csv").open(newline="") as fh:
        table = list(csv.DictReader(fh))
    assert len(table) == 12
    assert {r["verdict"] for r in table} == {"pass", "fail", "undecided", "not fitted"}
    assert "kit-07.csv: C fail" in result.output
    assert "kit-10.csv" in result.output


def test_batch_statistics_and_stand_out(tmp_path):
    out = tmp_path / "out"
    assert run("batch", KITS, "--spec", SPEC, "--out", out).exit_code == 0
    data = json.loads((out / "results.json").read_text())
    stats = data["statistics"]["C"]
    c = [r["C"] for r in data["rows"] if r["C"] is not None]
    assert stats["n"] == 11 == len(c)
    assert stats["min"] == min(c) and stats["max"] == max(c)
    assert stats["mean"] == pytest.approx(sum(c) / len(c))
    flagged = {(Path(s["file"]).name, s["value"]) for s in data["stand_out"]}
    assert ("kit-07.csv", "C") in flagged
    assert "Iglewicz" in data["stand_out_rule"]
    assert data["counts"] == {"pass": 9, "fail": 1, "undecided": 1, "not fitted": 1}


def test_modified_z_score_worked_by_hand():
    # median 1.0; |x - median| sorted 0, 0, .01, .01, .02, .02, 1.0 -> MAD 0.01;
    # M(2.0) = 0.6745 * 1.0 / 0.01 = 67.45 > 3.5; M(1.02) = 1.35 is not flagged
    # (Iglewicz & Hoaglin 1993, from memory)
    xs = [1.0, 1.01, 0.99, 1.02, 0.98, 1.0, 2.0]
    empty = {q: None for q in QUANTITIES}
    rows = [{"file": f"u{i}", **empty, "L": x} for i, x in enumerate(xs)]
    _, stand_out = results.statistics(rows)
    assert [(s["file"], s["value"]) for s in stand_out] == [("u6", "L")]
    assert stand_out[0]["z"] == pytest.approx(67.45, abs=0.01)


def test_one_and_two_workers_agree(tmp_path):
    one, two = tmp_path / "one", tmp_path / "two"
    assert run("batch", KITS, "--spec", SPEC, "--out", one, "--workers", "1").exit_code == 0
    assert run("batch", KITS, "--spec", SPEC, "--out", two, "--workers", "2").exit_code == 0
    assert (one / "results.csv").read_text() == (two / "results.csv").read_text()


def test_results_are_not_replaced_without_a_flag_and_resume_refits_nothing_done(
    tmp_path, monkeypatch
):
    out = tmp_path / "out"
    assert run("batch", KITS, "--out", out, "--workers", "1").exit_code == 0
    first = (out / "results.csv").read_text()
    again = run("batch", KITS, "--out", out)
    assert again.exit_code == 2
    assert "--resume" in again.output and "--force" in again.output
    assert (out / "results.csv").read_text() == first
    # an interrupted batch: one record missing
    records = sorted((out / "fits").glob("*.json"))
    assert len(records) == 12
    records[3].unlink()
    calls = []
    real = batch.fit_one

    def counting(*args):
        calls.append(args[0])
        return real(*args)

    monkeypatch.setattr(batch, "fit_one", counting)
    resumed = run("batch", KITS, "--out", out, "--workers", "1", "--resume")
    assert resumed.exit_code == 0, resumed.output
    assert len(calls) == 1
    assert (out / "results.csv").read_text() == first
    forced = run("batch", KITS, "--out", out, "--workers", "1", "--force")
    assert forced.exit_code == 0 and len(calls) == 13


def test_changed_setup_is_fitted_again_on_resume(tmp_path):
    folder = tmp_path / "kits"
    folder.mkdir()
    for name in ("kit-01.csv", "fitkit-setup.toml"):
        shutil.copy(KITS / name, folder / name)
    out = tmp_path / "out"
    assert run("batch", folder, "--out", out, "--workers", "1").exit_code == 0
    first = rows_by_name(out)["kit-01.csv"]["R"]
    text = (folder / "fitkit-setup.toml").read_text().replace('"22"', '"20"')
    (folder / "fitkit-setup.toml").write_text(text)
    assert run("batch", folder, "--out", out, "--workers", "1", "--resume").exit_code == 0
    assert rows_by_name(out)["kit-01.csv"]["R"] != pytest.approx(first, rel=1e-6)


def test_no_cell_from_a_file_starts_a_formula(tmp_path, monkeypatch):
    # OWASP "CSV Injection" (from memory): cells beginning = + - @ tab CR are formulas
    monkeypatch.chdir(tmp_path)
    for name in ("=HYPERLINK(1).csv", "+1.csv", "-2.csv", "@SUM(1).csv"):
        Path(name).write_text("=cmd|' /C calc'!A0,2\n1,2\n")
    assert run("batch", ".", "--out", "out", "--workers", "1").exit_code == 0
    with open("out/results.csv", newline="") as fh:
        cells = [cell for row in csv.reader(fh) for cell in row]
    assert any(cell.startswith("'=HYPERLINK") for cell in cells)
    assert not [c for c in cells if c[:1] in ("=", "+", "-", "@", "\t", "\r")]


@pytest.mark.parametrize("start", ["=", "+", "-", "@", "\t", "\r"])
def test_safe_cell_prefixes_every_formula_start(start):
    assert results.safe_cell(start + "x") == "'" + start + "x"
    assert results.safe_cell("x" + start) == "x" + start


def test_no_files_and_bad_spec_exit_2(tmp_path):
    empty = run("batch", tmp_path / "nothing-*.csv", "--out", tmp_path / "o")
    assert empty.exit_code == 2 and "no sweep files matched" in empty.output
    bad = tmp_path / "spec.toml"
    bad.write_text("[L]\nnominal = 3\n")
    result = run("batch", KITS, "--spec", bad, "--out", tmp_path / "o")
    assert result.exit_code == 2 and "spec.toml" in result.output and "fix:" in result.output
    assert not (tmp_path / "o").exists()


def test_batch_of_a_list_and_a_glob(tmp_path):
    out = tmp_path / "out"
    result = run("batch", KITS / "kit-01.csv", str(KITS / "kit-0[23].csv"), "--out", out)
    assert result.exit_code == 0, result.output
    assert sorted(rows_by_name(out)) == ["kit-01.csv", "kit-02.csv", "kit-03.csv"]
    assert rows_by_name(out)["kit-01.csv"]["verdict"] == ""  # no spec: no verdicts


def test_the_summary_does_not_depend_on_the_order_fits_finish(tmp_path):
    # workers finish in any order: the tally of the records, added last to first, must
    # give the summary results.json holds (counts, statistics, stand-out units, notes)
    from fitkit.batch_inputs import find_inputs
    from fitkit.batch_output import load_record, record_file
    from fitkit.spec import load_spec

    out = tmp_path / "out"
    assert run("batch", KITS, "--spec", SPEC, "--out", out, "--workers", "1").exit_code == 0
    written = json.loads((out / "results.json").read_text())
    found = find_inputs([str(KITS)], skip=out)
    tally = results.Tally(found, load_spec(SPEC))
    for index in reversed(range(len(found.files))):
        record = load_record(record_file(out, found.files[index], found.root))
        tally.add(index, results.row_source(record))
    summary = json.loads(json.dumps(tally.summary(out)))
    for key in ("counts", "marks", "statistics", "stand_out", "same_bytes", "notes"):
        assert summary[key] == written[key], key
    assert written["notes"] and written["stand_out"]  # the kits give some of each
