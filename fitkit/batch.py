"""Many sweeps at once: fit every input on all cores and keep one record per input path.

Every input gets a record, fitted or not, written atomically to ``OUT/fits/<name>.json``
(the input's path relative to the batch root, made safe by
:func:`fitkit.batch_inputs.record_name`) as soon as its fit finishes. A record holds the
input's path, the SHA-256 of its bytes and a key of the settings (setup file bytes and
options); an interrupted batch resumed with the same inputs reuses a record only when all
three still match, so every input path is fitted once and rows never trade places,
whatever the resume history, and files with identical bytes each keep their own record.

Worker processes print nothing (C libraries' messages go to the null device), ignore
Ctrl-C (the main process stops them after their current fit) and end themselves when the
main process ends, however it ends.

The results (rows, statistics, verdicts, files) are made by :mod:`fitkit.batch_results`.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import functools
import gc
import hashlib
import itertools
import json
import multiprocessing
import os
import select
import signal
import sys
import threading
import time
from collections.abc import Callable, Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from multiprocessing import forkserver, resource_tracker
from pathlib import Path

from fitkit.batch_inputs import Inputs, file_sha256, unreadable_reason
from fitkit.batch_output import (
    FAILED,
    FITTED,
    RESULTS_CSV,
    RESULTS_JSON,
    RESULTS_READABLE,
    load_record,
    record_file,
    write_atomic,
)
from fitkit.batch_results import row_source
from fitkit.errors import FitkitError, InputError

__all__ = [
    "FAILED",
    "FITTED",
    "RESULTS_CSV",
    "RESULTS_JSON",
    "RESULTS_READABLE",
    "Stop",
    "file_sha256",
    "fit_one",
    "fit_with",
    "load_record",
    "quiet_c_output",
    "record_file",
    "run_batch",
    "settings_key",
]


def settings_key(path: Path, settings: dict) -> str:
    """A key of everything besides the sweep's own bytes that decides its fit: the
    settings and the bytes of the setup file used."""
    from fitkit.bench_file import find_bench_file

    return _key_for(find_bench_file(path, settings.get("setup_path")), settings)


def _key_for(bench: Path | None, settings: dict) -> str:
    bench_sha = file_sha256(bench) if bench else None
    text = json.dumps([bench_sha, settings], sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def fit_with(path: str | Path, settings: dict):
    """:func:`fitkit.workflow.fit_file` with the batch's settings dict."""
    from fitkit.workflow import fit_file

    return fit_file(
        path,
        setup_path=settings.get("setup_path"),
        overrides=settings.get("overrides"),
        known=tuple(settings.get("known", ())),
        noise=settings.get("noise"),
        topology=settings.get("topology", "auto"),
    )


def _new_record(path: str, key: str) -> dict:
    return {
        "file": path,
        "abs_path": os.path.abspath(path),
        "sha256": None,  # the reader's, once it has read the file
        "settings_key": key,
        "status": FAILED,
        "reason": "",
        "setup_file": None,
        "fit": None,
        "doubtful": {},
        "outside": None,
    }


def fit_one(path: str, key: str, settings: dict, record_path: str) -> tuple[str, dict]:
    """Fit one file and write its record; never raises for a bad file (the record says
    why). Returns the status and the record's :func:`~fitkit.batch_results.row_source`.
    This is what each worker process runs.

    The record's SHA-256 is the one the reader computed from the bytes it fitted (the
    file is read once), or the file's when it could not be read or fitted.

    Raises
    ------
    InputError
        Only when the record cannot be written (a full disk, a read-only folder).
    """
    record = _new_record(path, key)
    try:
        with quiet_c_output():
            fit, bench = fit_with(path, settings)
        record.update(status=FITTED, fit=fit.to_dict())
        record["sha256"] = fit.sweep.get("sha256")
        record["setup_file"] = str(bench) if bench else None
        record["doubtful"] = {
            name: getattr(q, "doubtful", "")
            for name, q in fit.quantities.items()
            if getattr(q, "doubtful", "")
        }
        text = json.dumps(record, allow_nan=False)
    except FitkitError as exc:
        record.update(reason=exc.user_text(), outside=_outside(exc))
        text = json.dumps(record, allow_nan=False)
    except Exception as exc:  # noqa: BLE001  a reader or fit bug must not stop the batch
        record.update(status=FAILED, fit=None, doubtful={})
        record["reason"] = (
            f"{path}: internal error {type(exc).__name__}: {exc}"
            "\n  fix: this is a fitkit bug; please report it with the file"
        )
        text = json.dumps(record, allow_nan=False)
    if record["sha256"] is None and record["status"] == FAILED:
        record["sha256"] = file_sha256(Path(path))
        text = json.dumps(record, allow_nan=False)
    write_atomic(Path(record_path), text)
    return record["status"], row_source(record)


def _outside(exc: FitkitError) -> dict | None:
    """Where a resonance outside the sweep lies, when the fit said so."""
    side = getattr(exc, "outside", None)
    if side is None:
        return None
    return {"side": side, "bound_hz": getattr(exc, "bound_hz", None)}


def _unreadable_record(path: Path, key: str, record_path: Path) -> dict:
    """Write and return the record of an input that cannot be read (a pipe, a folder, a
    loop...)."""
    what, fix = unreadable_reason(path) or ("cannot be read", "check the file")
    record = _new_record(str(path), key)
    record["reason"] = InputError(what, remedy=fix, path=path).user_text()
    write_atomic(record_path, json.dumps(record, allow_nan=False))
    return record


def _still_valid(record: dict | None, path: Path, key: str) -> bool:
    """Whether a record of an earlier run is for this path, these settings and the
    file's present bytes (hashed only when the rest matches)."""
    return (
        record is not None
        and record.get("abs_path") == os.path.abspath(path)
        and record.get("settings_key") == key
        and record.get("sha256") is not None
        and record.get("sha256") == file_sha256(path)
    )


@contextlib.contextmanager
def quiet_c_output() -> Iterator[None]:
    """Send whatever is written to file descriptors 1 and 2 (numeric libraries' C
    messages) to the null device for the block."""
    try:
        sys.stdout.flush()
        sys.stderr.flush()
        saved = [os.dup(1), os.dup(2)]
    except (OSError, ValueError, AttributeError):
        yield  # no descriptors to guard (closed streams): nothing can reach the user
        return
    null = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(null, 1)
        os.dup2(null, 2)
        yield
    finally:
        _flush_c_streams()  # what C code buffered goes to the null device too
        os.dup2(saved[0], 1)
        os.dup2(saved[1], 2)
        for fd in (*saved, null):
            os.close(fd)


def _flush_c_streams() -> None:
    with contextlib.suppress(OSError, AttributeError, TypeError):
        _c_library().fflush(None)


@functools.cache
def _c_library() -> ctypes.CDLL:
    """The C library of this process, opened once."""
    return ctypes.CDLL(None)


def _worker_start(main_pid: int) -> None:
    """Worker set-up: Ctrl-C is the main process's to handle; end with the main process."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_exit_with, args=(main_pid,), daemon=True).start()
    gc.freeze()  # as _settled_heap does, for the worker's life


def _exit_with(pid: int) -> None:
    """Block until process ``pid`` ends, then end this process at once."""
    try:
        handle = os.pidfd_open(pid)
    except OSError as exc:
        if exc.errno == errno.ESRCH:
            os._exit(1)
        handle = None
    except AttributeError:  # no pidfd on this platform: poll
        handle = None
    if handle is not None:
        select.select([handle], [], [])
    else:
        while _alive(pid):
            time.sleep(0.5)
    os._exit(1)


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _pool(workers: int) -> ProcessPoolExecutor:
    # forkserver: workers start from a clean, preloaded server (no fork of a threaded
    # parent); spawn where the platform has no forkserver. The forkserver and the
    # resource tracker end by themselves once every worker has ended.
    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
    ctx = multiprocessing.get_context(method)
    if method == "forkserver":
        ctx.set_forkserver_preload(["fitkit.workflow", "fitkit.batch"])
    with quiet_c_output():  # the helper processes keep the null device as stdout/stderr
        resource_tracker.ensure_running()
        if method == "forkserver":
            forkserver.ensure_running()
    return ProcessPoolExecutor(
        max_workers=workers, mp_context=ctx, initializer=_worker_start, initargs=(os.getpid(),)
    )


def run_batch(
    inputs: Inputs,
    settings: dict,
    out: Path,
    *,
    workers: int = 0,
    resume: bool = False,
    on_done: Callable[[str], None] | None = None,
    on_record: Callable[[int, dict], None] | None = None,
) -> None:
    """Fit every input and write its record (:func:`record_file`), reusing still-valid
    records when resuming. Inputs are handed out one by one while the workers fit, and
    at most a few fits are in flight, so memory does not grow with the number of inputs.
    Each sweep is read and hashed once, by the worker that fits it (and, when resuming,
    hashed by this process to check its record).

    Parameters
    ----------
    inputs : Inputs
        What :func:`fitkit.batch_inputs.find_inputs` found.
    settings : dict
        ``setup_path``, ``overrides``, ``known``, ``noise``, ``topology`` as for
        :func:`fitkit.workflow.fit_file`.
    out : Path
        The output folder (see :func:`fitkit.batch_output.output_folder`).
    workers : int
        Worker processes; 0 means one per core; 1 fits in this process.
    resume : bool
        Reuse records of earlier runs for the same path, bytes and settings.
    on_done : callable, optional
        Called with each input's status as it finishes (for a progress bar).
    on_record : callable, optional
        Called with each input's index in ``inputs.files`` and the
        :func:`~fitkit.batch_results.row_source` of its record, in the order the fits
        finish (for :class:`~fitkit.batch_results.Tally`).

    Raises
    ------
    InputError
        When a record cannot be written; finished records are kept.
    FitkitError
        When a worker process dies from outside.
    """
    done, keep = on_done or (lambda status: None), on_record or (lambda index, record: None)

    def finished(index: int, status: str, record: dict) -> None:
        done(status)
        keep(index, record)

    jobs = _jobs(inputs, settings, out, resume, finished)
    first = list(itertools.islice(jobs, 2))
    workers = workers or os.cpu_count() or 1
    if workers == 1 or len(first) < 2:  # no pool to start for a single fit
        import fitkit.workflow  # noqa: F401  (loaded before the heap is settled)

        with _settled_heap():
            for index, args in itertools.chain(first, jobs):
                finished(index, *fit_one(*args))
    else:
        _fit_in_pool(itertools.chain(first, jobs), workers, finished)


@contextlib.contextmanager
def _settled_heap() -> Iterator[None]:
    """Leave the objects alive now (modules, the fitting libraries: some 120,000) out of
    the garbage collector's passes for the block. Fits make many short-lived objects,
    and each full pass over the long-lived ones costs some 40 ms (Python's
    :func:`gc.freeze`). A heap frozen by the caller before stays frozen."""
    frozen_before = gc.get_freeze_count() > 0
    gc.freeze()
    try:
        yield
    finally:
        if not frozen_before:
            gc.unfreeze()


def _jobs(
    inputs: Inputs, settings: dict, out: Path, resume: bool, finished: Callable
) -> Iterator[tuple[int, tuple]]:
    """The fits to do, as each input's index and the arguments of :func:`fit_one`; an
    input whose record is still valid (when resuming) or that cannot be read is dealt
    with here."""
    from fitkit.bench_file import find_bench_file

    keys: dict = {}  # setup file -> settings key: each setup file is hashed once
    for index, path in enumerate(inputs.files):
        record_path = record_file(out, path, inputs.root)
        bench = find_bench_file(path, settings.get("setup_path"))
        if bench not in keys:
            keys[bench] = _key_for(bench, settings)
        key = keys[bench]
        record = load_record(record_path) if resume else None
        if unreadable_reason(path) is not None:
            finished(index, FAILED, _unreadable_record(path, key, record_path))
        elif _still_valid(record, path, key):
            finished(index, "reused", row_source(record))
        else:  # the worker's reader hashes the bytes it fits
            yield index, (str(path), key, settings, str(record_path))


def _fit_in_pool(jobs: Iterator[tuple[int, tuple]], workers: int, finished: Callable) -> None:
    """Fit in worker processes, a few jobs in flight at a time."""
    with _pool(workers) as pool:
        running: dict = {}  # future -> input index
        try:
            for index, args in jobs:
                running[pool.submit(fit_one, *args)] = index
                if len(running) >= 2 * workers:
                    break
            while running:
                ended, _ = wait(running, return_when=FIRST_COMPLETED)
                for future in ended:
                    finished(running.pop(future), *future.result())
                    for index, args in jobs:
                        running[pool.submit(fit_one, *args)] = index
                        break
        except BrokenProcessPool:
            raise FitkitError(
                "a worker process ended unexpectedly (stopped from outside, or out of memory)",
                remedy="run again with --resume: finished fits are kept",
            ) from None
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise


class Stop:
    """SIGTERM (and SIGHUP) treated like Ctrl-C for the block: the main process stops its
    workers after their current fit; ``signum`` says which signal came."""

    def __init__(self) -> None:
        self.signum = signal.SIGINT
        self._saved: dict = {}

    def _handle(self, signum, frame) -> None:
        self.signum = signum
        raise KeyboardInterrupt

    def __enter__(self) -> Stop:
        if threading.current_thread() is threading.main_thread():
            for sig in (signal.SIGTERM, signal.SIGHUP):
                self._saved[sig] = signal.signal(sig, self._handle)
        return self

    def __exit__(self, *exc) -> None:
        for sig, handler in self._saved.items():
            signal.signal(sig, handler)
