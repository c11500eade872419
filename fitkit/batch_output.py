"""The output folder of a batch: one batch at a time, whole files or none, clear errors.

A batch holds an exclusive lock (``fcntl.flock``) on ``OUT/.fitkit-batch.lock`` while it
runs; the operating system drops the lock when the process ends, however it ends, so a
killed batch never leaves the folder locked. Every file is written to a temporary file
beside it and renamed into place; a write that fails (a full disk, a read-only folder)
removes its temporary file and becomes one :class:`~fitkit.errors.InputError` naming the
folder and what to do.
"""

from __future__ import annotations

import contextlib
import datetime
import errno
import fcntl
import json
import os
import socket
import sys
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import IO

from fitkit.batch_inputs import record_name
from fitkit.errors import InputError

RECORDS_DIR = "fits"
FITTED, FAILED = "fitted", "failed"
RESULTS_CSV, RESULTS_READABLE, RESULTS_JSON = "results.csv", "results-readable.csv", "results.json"
LOCK_NAME = ".fitkit-batch.lock"
_TMP_SUFFIX = ".tmp"


def output_error(exc: OSError, path: Path, doing: str) -> InputError:
    """An :class:`InputError` for a failed write in the output folder, with the remedy."""
    if exc.errno == errno.ENOSPC or exc.errno == errno.EDQUOT:
        remedy = "free some space on that disk (or choose another --out), then run again "
        remedy += "with --resume: finished fits are kept"
    elif exc.errno in (errno.EROFS, errno.EACCES, errno.EPERM):
        remedy = "choose an --out folder you can write to"
    else:
        remedy = "check the output folder and its disk, then run again with --resume"
    return InputError(f"cannot {doing} ({exc.strerror})", remedy=remedy, path=path)


def write_atomic(path: Path, text: str) -> None:
    """Write text to a temporary file beside ``path``, then rename it into place.

    Raises
    ------
    InputError
        When the file cannot be written; the temporary file is removed.
    """
    with atomic_file(path) as fh:
        fh.write(text)


@contextlib.contextmanager
def atomic_file(path: Path, newline: str | None = None) -> Iterator[IO[str]]:
    """A text file opened for writing that replaces ``path`` only when the block ends
    without an error; on any error the temporary file is removed.

    Raises
    ------
    InputError
        When the file cannot be written.
    """
    tmp = path.with_name(f".{path.name}.{os.getpid()}{_TMP_SUFFIX}")
    try:
        with open(tmp, "w", encoding="utf-8", newline=newline) as fh:
            yield fh
        os.replace(tmp, path)
    except OSError as exc:
        _remove(tmp)
        raise output_error(exc, path, "write this file") from None
    except BaseException:
        _remove(tmp)
        raise


def _remove(tmp: Path) -> None:
    with contextlib.suppress(OSError):
        tmp.unlink()


@contextlib.contextmanager
def output_folder(out: Path, command: str = "") -> Iterator[Path]:
    """Make ``out`` (if missing) and hold its lock for the block; remove temporary
    files that a killed batch left behind.

    Raises
    ------
    InputError
        When the folder cannot be made or written, or another batch holds it.
    """
    try:
        out.mkdir(parents=True, exist_ok=True)
        (out / RECORDS_DIR).mkdir(exist_ok=True)
        fd = os.open(out / LOCK_NAME, os.O_RDWR | os.O_CREAT, 0o644)
    except OSError as exc:
        raise output_error(exc, out, "use this output folder") from None
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.pread(fd, 4096, 0).decode("utf-8", "replace").strip()
            raise InputError(
                f"the output folder is in use by another batch ({holder or 'holder unknown'})",
                remedy="wait until that batch ends, or choose another --out",
                path=out,
            ) from None
        _say_holder(fd, command)
        remove_stale_temporaries(out)
        yield out
    finally:
        os.close(fd)  # closing the only descriptor drops the lock


def _say_holder(fd: int, command: str) -> None:
    started = datetime.datetime.now().astimezone().isoformat(timespec="seconds")
    text = f"pid {os.getpid()} on {socket.gethostname()}, started {started}"
    if command:
        text += f": {command}"
    with contextlib.suppress(OSError):  # the note is a courtesy; the lock is what counts
        os.ftruncate(fd, 0)
        os.pwrite(fd, (text + "\n").encode(), 0)


def record_file(out: Path, path: Path, root: Path) -> Path:
    """Where the record of input ``path`` (below the batch root ``root``) is kept."""
    return out / RECORDS_DIR / record_name(path, root)


def load_record(path: Path) -> dict | None:
    """A saved fit record, or None when it is missing or half-written."""
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    ok = isinstance(record, dict) and record.get("status") in (FITTED, FAILED)
    return record if ok else None


def remove_stale_temporaries(out: Path) -> None:
    """Remove temporary files of earlier, killed runs (only ever called under the lock)."""
    for folder in (out, out / RECORDS_DIR):
        for tmp in folder.glob(f".*{_TMP_SUFFIX}"):
            with contextlib.suppress(OSError):
                tmp.unlink()


def check_output(out: Path, *, resume: bool, force: bool, names: Iterable[str]) -> None:
    """Refuse to mix with or replace earlier results unless asked.

    Raises
    ------
    InputError
        When results or records exist and neither ``resume`` nor ``force`` is set.
    """
    if resume or force:
        return
    taken = [n for n in names if (out / n).exists()]
    records = out / RECORDS_DIR
    if taken or (records.is_dir() and any(records.iterdir())):
        what = ", ".join(taken) if taken else f"fit records in {RECORDS_DIR}/"
        raise InputError(
            f"the output folder holds an earlier batch ({what})",
            remedy="add --resume to continue it without refitting finished files, --force "
            "to fit everything again and replace the results, or choose another --out",
            path=out,
        )


def command_line() -> str:
    """The command as typed (for the lock's note on who holds the folder)."""
    return " ".join(["fitkit", *sys.argv[1:]])[:300]
