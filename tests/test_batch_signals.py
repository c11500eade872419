"""fitkit batch stopped by a signal at any moment: resuming gives what one uninterrupted
run gives, and no worker, fork server or resource tracker outlives the batch."""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main

ROOT = Path(__file__).resolve().parent.parent
KITS = ROOT / "sample_sweeps" / "kits"
COPIES = 5


@pytest.fixture(scope="module")
def crate(tmp_path_factory):
    """60 sweeps (five copies of each of the twelve kits, so identical files too)."""
    folder = tmp_path_factory.mktemp("crate")
    shutil.copy(KITS / "fitkit-setup.toml", folder)
    for n in range(COPIES):
        for kit in sorted(KITS.glob("kit-*.csv")):
            shutil.copy(kit, folder / f"unit{n}-{kit.name}")
    return folder


@pytest.fixture(scope="module")
def clean_run(crate, tmp_path_factory):
    out = tmp_path_factory.mktemp("clean") / "out"
    result = CliRunner().invoke(
        main, ["batch", str(crate), "--out", str(out), "--workers", "1", "--model", "series"]
    )
    assert result.exit_code == 0, result.output
    return (out / "results.csv").read_text(encoding="utf-8")


def _group(pgid: int) -> list[int]:
    """Processes whose process group is ``pgid`` (a batch started in its own session)."""
    pids = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat", encoding="utf-8") as fh:
                fields = fh.read().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if int(fields[2]) == pgid and fields[0] != "Z":
            pids.append(int(entry))
    return pids


def _stop_after_some_records(crate: Path, out: Path, signum: int) -> subprocess.CompletedProcess:
    """Start a batch in its own session, send ``signum`` once 3 records exist."""
    argv = [sys.executable, "-m", "fitkit", "batch", str(crate), "--out", str(out)]
    argv += ["--workers", "2", "--model", "series"]
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.Popen(
        argv, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True
    )
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and proc.poll() is None:
        if (out / "fits").is_dir() and len(list((out / "fits").glob("*.json"))) >= 3:
            break
        time.sleep(0.005)
    proc.send_signal(signum)
    stdout, stderr = proc.communicate(timeout=60)
    survivors, deadline = _group(proc.pid), time.monotonic() + 5
    while survivors and time.monotonic() < deadline:
        time.sleep(0.05)
        survivors = _group(proc.pid)
    for pid in survivors:  # do not leave them to the next test
        os.kill(pid, signal.SIGKILL)
    assert survivors == [], "processes outlived the batch"
    return subprocess.CompletedProcess(argv, proc.returncode, stdout, stderr)


@pytest.mark.parametrize(
    "signum, status",
    [(signal.SIGINT, 130), (signal.SIGTERM, 143), (signal.SIGKILL, -signal.SIGKILL)],
)
def test_stopped_batch_resumes_to_the_uninterrupted_result(
    crate, clean_run, tmp_path, signum, status
):
    out = tmp_path / "out"
    stopped = _stop_after_some_records(crate, out, signum)
    assert stopped.returncode == status, stopped.stderr
    assert b"Traceback" not in stopped.stderr
    if signum != signal.SIGKILL:
        assert b"run again with --resume" in stopped.stderr
    left = len(list((out / "fits").glob("*.json")))
    assert 3 <= left < 12 * COPIES, "the batch was not stopped half-way"
    resumed = CliRunner().invoke(
        main,
        ["batch", str(crate), "--out", str(out), "--workers", "1", "--model", "series", "--resume"],
    )
    assert resumed.exit_code == 0, resumed.output
    assert (out / "results.csv").read_text(encoding="utf-8") == clean_run
    assert not [p for p in out.rglob("*") if p.name.endswith(".tmp")]
