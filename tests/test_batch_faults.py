"""fitkit batch against file-system faults: one clear line per bad input and the batch
goes on; a bad output folder is exit status 2 with a clear message; no traceback, no
temporary files left behind, nothing from C libraries on stdout."""

from __future__ import annotations

import csv
import ctypes
import errno
import json
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

import fitkit.batch as batch
import fitkit.batch_output as batch_output
from fitkit.cli import main

KITS = Path(__file__).resolve().parent.parent / "sample_sweeps" / "kits"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def rows(out: Path) -> dict:
    with (out / "results.csv").open(newline="", encoding="utf-8") as fh:
        return {r["file"]: r for r in csv.DictReader(fh)}


def no_temporaries(folder: Path) -> bool:
    return not [p for p in folder.rglob("*") if p.name.endswith(".tmp")]


@pytest.fixture
def bench(tmp_path, monkeypatch):
    """A folder of two good sweeps; the tests add the bad entries."""
    monkeypatch.chdir(tmp_path)
    folder = Path("d")
    folder.mkdir()
    shutil.copy(KITS / "fitkit-setup.toml", folder)
    shutil.copy(KITS / "kit-01.csv", folder / "kit-01.csv")
    shutil.copy(KITS / "kit-02.csv", folder / "kit-02.csv")
    return folder


def batch_of(*inputs, out="out"):
    result = run("batch", *inputs, "--out", out, "--workers", "1", "--model", "series")
    assert result.exit_code == 0, result.output
    assert "Traceback" not in result.output
    return result, rows(Path(out))


def test_a_named_pipe_is_one_line_and_never_opened(bench):
    os.mkfifo(bench / "pipe.csv")  # opening it for reading would wait for a writer
    result, table = batch_of(bench)
    assert table["d/pipe.csv"]["status"] == "failed"
    assert "named pipe (FIFO)" in table["d/pipe.csv"]["reason"]
    assert "fix:" in table["d/pipe.csv"]["reason"]
    assert table["d/kit-01.csv"]["status"] == table["d/kit-02.csv"]["status"] == "fitted"
    assert "not fitted: d/pipe.csv: a named pipe (FIFO)" in result.output


def test_a_link_to_itself_is_one_line(bench):
    os.symlink("loop.csv", bench / "loop.csv")
    result, table = batch_of(bench)
    assert "loops back on itself" in table["d/loop.csv"]["reason"]
    assert table["d/kit-01.csv"]["status"] == "fitted"
    assert result.output.count("loop.csv") == 1


def test_a_folder_named_like_a_sweep(bench):
    (bench / "more.csv").mkdir()
    shutil.copy(KITS / "kit-03.csv", bench / "more.csv" / "kit-03.csv")
    # walking a folder: the folder named more.csv is searched like any folder
    _, walked = batch_of(bench, out="walked")
    assert "d/more.csv/kit-03.csv" in walked and "d/more.csv" not in walked
    # a glob that matches it: its row says it is a folder
    _, globbed = batch_of("d/*.csv", out="globbed")
    assert "a folder, not a sweep file" in globbed["d/more.csv"]["reason"]
    assert len(globbed) == 3


def test_folder_link_loops_do_not_multiply_the_inputs(bench):
    (bench / "sub").mkdir()
    shutil.copy(KITS / "kit-03.csv", bench / "sub" / "kit-03.csv")
    os.symlink("..", bench / "sub" / "up")  # two loops back into the tree
    os.symlink(".", bench / "sub" / "here")
    for inputs in (["d/**/*.csv"], ["d"]):
        result, table = batch_of(*inputs, out=f"out-{len(inputs[0])}")
        assert sorted(table) == ["d/kit-01.csv", "d/kit-02.csv", "d/sub/kit-03.csv"]
        assert "skipped  d/sub/here: a link to the folder d/sub, already searched" in result.output
        assert "skipped  d/sub/up: a link to the folder d, already searched" in result.output


def test_a_glob_reaches_into_linked_folders_once(bench, tmp_path):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    shutil.copy(KITS / "kit-05.csv", elsewhere / "kit-05.csv")
    os.symlink(elsewhere, bench / "linked")
    _, table = batch_of("d/**/*.csv")
    assert "d/linked/kit-05.csv" in table and len(table) == 3


def test_an_unreadable_file_is_one_line(bench, monkeypatch):
    denied = (bench / "kit-02.csv").resolve()
    real_access = os.access

    def access(path, mode, **kw):  # as if read permission were missing (tests may run as root)
        return False if Path(path).resolve() == denied else real_access(path, mode, **kw)

    monkeypatch.setattr(os, "access", access)
    _, table = batch_of(bench)
    assert "permission denied" in table["d/kit-02.csv"]["reason"]
    assert "fitkit bug" not in table["d/kit-02.csv"]["reason"]
    assert table["d/kit-01.csv"]["status"] == "fitted"


def test_a_file_name_with_a_newline_keeps_the_csv_valid(bench):
    shutil.copy(KITS / "kit-01.csv", bench / "odd\nname.csv")  # named in "same bytes"
    result, table = batch_of(bench)
    assert table["d/odd\nname.csv"]["status"] == "fitted"  # read back by a CSV reader
    assert len(table) == 3
    assert "same bytes: d/kit-01.csv, d/odd\\nname.csv (identical" in result.output
    with open("out/results-readable.csv", newline="", encoding="utf-8") as fh:
        assert len(list(csv.DictReader(fh))) == 3
    data = json.loads(Path("out/results.json").read_text())
    assert "d/odd\nname.csv" in [r["file"] for r in data["rows"]]


def _refuse(err: int, where: str, monkeypatch, after: int = 0):
    """Make writes of files whose name contains ``where`` fail with ``err`` (after
    ``after`` bytes reach the temporary file, as a disk that fills up would)."""
    real_open = open

    class Full:
        def __init__(self, fh):
            self.fh = fh

        def write(self, text):
            self.fh.write(text[:after])
            self.fh.flush()
            raise OSError(err, os.strerror(err))

        def __getattr__(self, name):
            return getattr(self.fh, name)

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()

    def fake_open(path, mode="r", *args, **kw):
        fh = real_open(path, mode, *args, **kw)
        return Full(fh) if "w" in mode and where in str(path) else fh

    monkeypatch.setattr(batch_output, "open", fake_open, raising=False)


@pytest.mark.parametrize("where", ["kit-02.csv.json", "results.csv", "results.json"])
def test_a_full_disk_stops_with_exit_2_and_leaves_no_temporary_file(bench, monkeypatch, where):
    _refuse(errno.ENOSPC, where, monkeypatch, after=10)
    result = run("batch", bench, "--out", "out", "--workers", "1", "--model", "series")
    assert result.exit_code == 2
    assert "No space left on device" in result.output and "--resume" in result.output
    assert "Traceback" not in result.output
    assert no_temporaries(Path("out"))
    assert not Path("out/results.csv").exists() or where == "results.json"
    monkeypatch.delattr(batch_output, "open")
    # space again: the resumed batch finishes
    resumed = run("batch", bench, "--out", "out", "--workers", "1", "--resume", "--model", "series")
    assert resumed.exit_code == 0, resumed.output
    assert len(rows(Path("out"))) == 2


def test_a_read_only_output_folder_is_exit_2(bench, monkeypatch):
    real = os.open

    def read_only(path, flags, *args, **kw):
        if "out" in str(path) and flags & os.O_CREAT:
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(path))
        return real(path, flags, *args, **kw)

    monkeypatch.setattr(batch_output.os, "open", read_only)
    Path("out").mkdir()
    result = run("batch", bench, "--out", "out", "--workers", "1")
    assert result.exit_code == 2
    assert "out: cannot use this output folder (Read-only file system)" in result.output
    assert "fix: choose an --out folder you can write to" in result.output


def test_an_output_folder_that_cannot_be_made_is_exit_2(bench):
    Path("taken").write_text("a file, not a folder\n")
    result = run("batch", bench, "--out", "taken/out", "--workers", "1")
    assert result.exit_code == 2 and "taken/out: cannot use this output folder" in result.output


def test_the_output_folder_as_input_is_refused(bench):
    result = run("batch", bench, "--out", bench)
    assert result.exit_code == 2
    assert "output folder would also be searched" in result.output and "fix:" in result.output


def test_c_library_messages_do_not_reach_stdout(bench, monkeypatch, capfd):
    libc = ctypes.CDLL(None)
    real = batch.fit_with

    def noisy(path, settings):
        # what LAPACK's error handler does: C printf to stdout (and to stderr)
        libc.printf(b"On entry to DLASCL parameter number 4 had an illegal value\n")
        os.write(2, b"On entry to DLASCL (stderr)\n")
        return real(path, settings)

    monkeypatch.setattr(batch, "fit_with", noisy)
    result = run("batch", bench, "--out", "out", "--workers", "1", "--model", "series")
    libc.fflush(None)
    captured = capfd.readouterr()
    assert result.exit_code == 0
    assert "DLASCL" not in captured.out + captured.err + result.output
    assert "2 file(s): 2 fitted" in result.output
