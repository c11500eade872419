"""fitkit batch: each input path is one row with its own values, whatever the resume
history; identical files are said to be identical; one batch per output folder."""

from __future__ import annotations

import csv
import json
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.batch_inputs import record_name
from fitkit.batch_output import output_folder
from fitkit.cli import main

KITS = Path(__file__).resolve().parent.parent / "sample_sweeps" / "kits"
S2P = Path(__file__).resolve().parent.parent / "sample_sweeps" / "coil_self_resonance"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def table(out: Path) -> list[dict]:
    with (out / "results.csv").open(newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def fitted_alone(path: Path, tmp: Path) -> dict:
    """The row a file gets in a batch of its own (the outside check of 'its own values')."""
    alone = tmp / f"alone-{path.name}"
    alone.mkdir()
    shutil.copy(path, alone / path.name)
    shutil.copy(KITS / "fitkit-setup.toml", alone / "fitkit-setup.toml")
    out = tmp / f"out-alone-{path.name}"
    assert run("batch", alone, "--out", out, "--workers", "1", "--model", "series").exit_code == 0
    return table(out)[0]


@pytest.fixture
def crate(tmp_path):
    """The repro of the lost-rows report: two byte-identical copies of one kit, another
    kit, a Touchstone file and its byte-identical copy renamed."""
    folder = tmp_path / "crate"
    folder.mkdir()
    shutil.copy(KITS / "fitkit-setup.toml", folder)
    shutil.copy(KITS / "kit-01.csv", folder / "kit-01.csv")
    shutil.copy(KITS / "kit-01.csv", folder / "kit-01-again.csv")
    shutil.copy(KITS / "kit-07.csv", folder / "kit-07.csv")
    two_port = next(S2P.glob("*.s2p"))
    shutil.copy(two_port, folder / "a.s2p")
    shutil.copy(two_port, folder / "b.s2p")
    return folder


def test_identical_files_each_keep_their_row_through_resumes(crate, tmp_path):
    out = tmp_path / "out"
    args = ("batch", crate, "--out", out, "--workers", "1", "--model", "series")
    first = run(*args)
    assert first.exit_code == 0, first.output
    rows = table(out)
    names = [Path(r["file"]).name for r in rows]
    assert sorted(names) == ["a.s2p", "b.s2p", "kit-01-again.csv", "kit-01.csv", "kit-07.csv"]
    for _ in range(3):
        again = run(*args, "--resume")
        assert again.exit_code == 0, again.output
        assert table(out) == rows
    by_name = {Path(r["file"]).name: r for r in rows}
    # each row holds the values of its own file, as fitted on its own
    assert by_name["kit-07.csv"]["C"] == fitted_alone(crate / "kit-07.csv", tmp_path)["C"]
    assert by_name["kit-01.csv"]["C"] == fitted_alone(crate / "kit-01.csv", tmp_path)["C"]
    assert by_name["kit-01-again.csv"]["C"] == by_name["kit-01.csv"]["C"]
    # identical bytes are said so: CSV, JSON and the printed summary
    assert by_name["kit-01.csv"]["same_bytes_as"] == str(crate / "kit-01-again.csv")
    assert by_name["b.s2p"]["same_bytes_as"] == str(crate / "a.s2p")
    assert by_name["kit-07.csv"]["same_bytes_as"] == ""
    data = json.loads((out / "results.json").read_text())
    assert sorted(map(sorted, data["same_bytes"])) == [
        [str(crate / "a.s2p"), str(crate / "b.s2p")],
        [str(crate / "kit-01-again.csv"), str(crate / "kit-01.csv")],
    ]
    assert data["marks"]["identical files"] == 4
    assert "same bytes:" in first.output and "kit-01-again.csv" in first.output


def test_a_new_copy_added_before_resume_is_its_own_row(crate, tmp_path):
    out = tmp_path / "out"
    args = ("batch", crate, "--out", out, "--workers", "1", "--model", "series")
    assert run(*args).exit_code == 0
    shutil.copy(crate / "kit-07.csv", crate / "kit-07-copy.csv")
    resumed = run(*args, "--resume")
    assert resumed.exit_code == 0, resumed.output
    files = [r["file"] for r in table(out)]
    assert len(files) == len(set(files)) == 6
    assert str(crate / "kit-07-copy.csv") in files
    row = {r["file"]: r for r in table(out)}[str(crate / "kit-07-copy.csv")]
    assert row["status"] == "fitted" and row["same_bytes_as"] == str(crate / "kit-07.csv")


def test_a_file_changed_in_place_is_fitted_again_on_resume(crate, tmp_path):
    out = tmp_path / "out"
    args = ("batch", crate, "--out", out, "--workers", "1", "--model", "series")
    assert run(*args).exit_code == 0
    shutil.copy(KITS / "kit-07.csv", crate / "kit-01.csv")  # another unit's sweep, same name
    assert run(*args, "--resume").exit_code == 0
    rows = {Path(r["file"]).name: r for r in table(out)}
    assert rows["kit-01.csv"]["C"] == rows["kit-07.csv"]["C"]
    assert rows["kit-01.csv"]["sha256"] == rows["kit-07.csv"]["sha256"]
    assert rows["kit-01-again.csv"]["C"] != rows["kit-01.csv"]["C"]


def test_records_are_named_after_their_inputs(tmp_path):
    for sub in ("bench a", "bench b"):
        (tmp_path / "in" / sub).mkdir(parents=True)
        shutil.copy(KITS / "kit-02.csv", tmp_path / "in" / sub / "kit.csv")
    out = tmp_path / "out"
    result = run("batch", tmp_path / "in", "--out", out, "--workers", "1", "--model", "series")
    assert result.exit_code == 0, result.output
    names = sorted(p.name for p in (out / "fits").iterdir())
    assert names == ["bench a%2Fkit.csv.json", "bench b%2Fkit.csv.json"]
    assert [r["record"] for r in table(out)] == ["fits/" + n for n in names]


@pytest.mark.parametrize(
    "path, name",
    [
        ("root/kit.csv", "kit.csv.json"),
        ("root/a/b.csv", "a%2Fb.csv.json"),
        ("root/new\nline.csv", "new%0Aline.csv.json"),
        ("root/50%.csv", "50%25.csv.json"),
        ("root/.hidden.csv", "%2Ehidden.csv.json"),
    ],
)
def test_record_names_are_safe_and_distinct(path, name):
    assert record_name(Path(path), Path("root")) == name


def test_a_very_long_name_is_cut_and_stays_distinct():
    a = record_name(Path("r/" + "x" * 300 + "a.csv"), Path("r"))
    b = record_name(Path("r/" + "x" * 300 + "b.csv"), Path("r"))
    assert a != b and len(a) <= 205 and "~" in a


def test_a_second_batch_into_a_folder_in_use_is_refused(tmp_path):
    out = tmp_path / "out"
    with output_folder(out, "fitkit batch (the first one)"):
        second = run("batch", KITS / "kit-01.csv", "--out", out, "--workers", "1")
    assert second.exit_code == 2
    assert str(out) in second.output and "in use by another batch" in second.output
    assert f"pid {os.getpid()}" in second.output and "the first one" in second.output
    assert "fix:" in second.output
    assert not (out / "results.csv").exists()
    # the lock went with its holder
    after = run("batch", KITS / "kit-01.csv", "--out", out, "--workers", "1")
    assert after.exit_code == 0, after.output


def test_resume_and_force_together_are_refused(tmp_path):
    result = run("batch", KITS, "--out", tmp_path / "o", "--resume", "--force")
    assert result.exit_code == 2 and "--resume" in result.output and "fix:" in result.output
    assert not (tmp_path / "o").exists()


def test_an_input_named_twice_is_one_row_in_first_seen_order(tmp_path):
    out = tmp_path / "out"
    again = f"{KITS}/../kits/kit-01.csv"  # the same file by another spelling
    result = run("batch", KITS / "kit-02.csv", KITS / "kit-01.csv", again, "--out", out)
    assert result.exit_code == 0, result.output
    assert [Path(r["file"]).name for r in table(out)] == ["kit-02.csv", "kit-01.csv"]
