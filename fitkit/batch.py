"""Many sweeps at once: find the files, fit them on all cores, keep every result, judge.

Every input gets a record, fitted or not; a record is written atomically to
``OUT/fits/<key>.json`` as soon as its fit finishes, so an interrupted batch resumes
without refitting finished files. The key is the SHA-256 of the input file's bytes
together with the setup file's bytes and the fit settings: a changed file or setting is
fitted again, an unchanged one is not.

The results (``results.csv``, ``results.json``) are one row per input with values,
uncertainties, verdicts against a specification, and the reason for any file that could
not be read or fitted; plus batch statistics and the units that stand out.
"""

from __future__ import annotations

import csv
import glob
import hashlib
import io
import json
import multiprocessing
import os
from collections.abc import Callable, Iterable
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path

import numpy as np

from fitkit.errors import FitkitError, InputError
from fitkit.result import QUANTITIES
from fitkit.spec import Spec, judge
from fitkit.version import __version__

#: file name endings a folder is searched for
SWEEP_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".s1p", ".s2p", ".ts")
RECORDS_DIR = "fits"
FITTED, FAILED = "fitted", "failed"


def find_inputs(items: Iterable[str], *, skip: Path | None = None) -> list[Path]:
    """The sweep files named by folders, files or glob patterns, in a stable order.

    Parameters
    ----------
    items : iterable of str
        Folders (searched below for files ending in one of ``SWEEP_SUFFIXES``), files
        (kept even when missing, so their row can say so), or glob patterns
        (``*``, ``?``, ``[``; ``**`` reaches into subfolders).
    skip : Path, optional
        A folder whose files are never inputs (the output folder).

    Raises
    ------
    InputError
        When nothing matches.
    """
    found: list[Path] = []
    for item in items:
        p = Path(item)
        if p.is_dir():
            found += sorted(f for f in p.rglob("*") if f.suffix.lower() in SWEEP_SUFFIXES)
        elif any(ch in item for ch in "*?["):
            found += sorted(Path(f) for f in glob.glob(item, recursive=True) if Path(f).is_file())
        else:
            found.append(p)
    if skip is not None:
        skip = skip.resolve()
        found = [f for f in found if skip not in f.resolve().parents]
    unique = list(dict.fromkeys(found))
    if not unique:
        raise InputError(
            f"no sweep files matched {' '.join(items)}",
            remedy=f"give folders holding files ending in {', '.join(SWEEP_SUFFIXES)}, "
            "files, or a quoted glob such as 'kits/*.csv'",
        )
    return unique


def file_sha256(path: Path) -> str | None:
    """The SHA-256 of a file's bytes, or None when it cannot be read."""
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


def record_key(path: Path, settings: dict) -> tuple[str | None, str]:
    """(SHA-256 of the file or None when unreadable, the record key for these settings)."""
    from fitkit.bench_file import find_bench_file

    sha = file_sha256(path)
    bench = find_bench_file(path, settings.get("setup_path"))
    bench_sha = file_sha256(bench) if bench else None
    text = json.dumps([sha or str(path), bench_sha, settings], sort_keys=True, default=str)
    return sha, hashlib.sha256(text.encode()).hexdigest()[:32]


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


def fit_one(path: str, sha: str | None, key: str, settings: dict, records_dir: str) -> dict:
    """Fit one file and write its record; never raises for a bad file (the record says why).

    This is what each worker process runs.
    """
    record = {"file": path, "sha256": sha, "key": key, "setup_file": None, "fit": None}
    try:
        fit, bench = fit_with(path, settings)
        record.update(status=FITTED, reason="", fit=fit.to_dict())
        record["setup_file"] = str(bench) if bench else None
    except FitkitError as exc:
        record.update(status=FAILED, reason=exc.user_text())
    except Exception as exc:  # noqa: BLE001  a reader or fit bug must not stop the batch
        reason = (
            f"{path}: internal error {type(exc).__name__}: {exc}"
            "\n  fix: this is a fitkit bug; please report it with the file"
        )
        record.update(status=FAILED, reason=reason)
    write_atomic(Path(records_dir) / f"{key}.json", json.dumps(record, allow_nan=False))
    return record


def write_atomic(path: Path, text: str) -> None:
    """Write text to a temporary file beside ``path``, then rename it into place."""
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.write_text(text, encoding="utf-8")
    os.replace(tmp, path)


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


def _load_record(path: Path) -> dict | None:
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None  # missing or half-written: fit again
    return record if record.get("status") in (FITTED, FAILED) else None


def _pool(workers: int) -> ProcessPoolExecutor:
    # forkserver: workers start from a clean, preloaded server (no fork of a threaded
    # parent); spawn where the platform has no forkserver
    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
    ctx = multiprocessing.get_context(method)
    if method == "forkserver":
        ctx.set_forkserver_preload(["fitkit.workflow", "fitkit.batch"])
    return ProcessPoolExecutor(max_workers=workers, mp_context=ctx)


def run_batch(
    files: list[Path],
    settings: dict,
    out: Path,
    *,
    workers: int = 0,
    resume: bool = False,
    on_done: Callable[[dict], None] | None = None,
) -> list[dict]:
    """Fit every file, reusing finished records when resuming.

    Parameters
    ----------
    files : list of Path
        The inputs (see :func:`find_inputs`).
    settings : dict
        ``setup_path``, ``overrides``, ``known``, ``noise`` as for
        :func:`fitkit.workflow.fit_file`.
    out : Path
        The output folder; records go to ``out/fits``.
    workers : int
        Worker processes; 0 means one per core; 1 fits in this process.
    resume : bool
        Reuse records of earlier runs with the same key.
    on_done : callable, optional
        Called with each record as it finishes (for a progress bar).

    Returns
    -------
    list of dict
        One record per input, in the order of ``files``.
    """
    records_dir = out / RECORDS_DIR
    records_dir.mkdir(parents=True, exist_ok=True)
    done: dict[int, dict] = {}
    todo = []
    for i, path in enumerate(files):
        sha, key = record_key(path, settings)
        old = _load_record(records_dir / f"{key}.json") if resume else None
        if old is not None:
            done[i] = old
            if on_done:
                on_done(old)
        else:
            todo.append((i, (str(path), sha, key, settings, str(records_dir))))
    workers = workers or os.cpu_count() or 1
    if workers == 1 or len(todo) <= 1:
        for i, args in todo:
            done[i] = fit_one(*args)
            if on_done:
                on_done(done[i])
    else:
        with _pool(min(workers, len(todo))) as pool:
            futures = {pool.submit(fit_one, *args): i for i, args in todo}
            try:
                for future in as_completed(futures):
                    done[futures[future]] = future.result()
                    if on_done:
                        on_done(done[futures[future]])
            except BaseException:
                pool.shutdown(wait=True, cancel_futures=True)
                raise
    return [done[i] for i in range(len(files))]


def _values(fit: dict | None) -> dict:
    """``{quantity: (value, stderr)}`` from a saved fit dict (``None`` values if absent)."""
    if not fit:
        return {}
    entries = {**fit["values"], **fit["derived"]}
    return {q: (e["value"], e["stderr"]) for q, e in entries.items()}


def _row(record: dict, spec: Spec | None) -> dict:
    fit = record.get("fit")
    values = _values(fit)
    row = {k: record.get(k) for k in ("file", "sha256", "status")}
    row["verdict"] = "not fitted" if fit is None else ""
    # one line per cell, so the CSV stays one row per file for line-based tools
    row["reason"] = " ".join(record.get("reason", "").split())
    for q in QUANTITIES:
        row[q], row[f"{q}_u"] = values.get(q, (None, None))
    if spec is not None:
        verdicts = judge(values, spec) if fit is not None else None
        for lim in spec.limits:
            row[f"{lim.name}_verdict"] = verdicts.values[lim.name].text() if verdicts else ""
        if verdicts:
            row["verdict"] = verdicts.overall
    row["stands_out"] = ""
    row["warnings"] = "; ".join(fit["fit"]["warnings"]) if fit else ""
    row["setup_file"] = record.get("setup_file")
    return row


#: Iglewicz & Hoaglin (1993), "How to Detect and Handle Outliers", modified z-score
#: M = 0.6745 (x - median) / MAD, flag |M| > 3.5 (from memory)
STAND_OUT_LIMIT = 3.5
STAND_OUT_MIN_UNITS = 5
STAND_OUT_RULE = (
    f"modified z-score |0.6745 (x - median) / MAD| > {STAND_OUT_LIMIT} (Iglewicz and Hoaglin, "
    f"1993, from memory), for values determined in at least {STAND_OUT_MIN_UNITS} units"
)


def statistics(rows: list[dict]) -> tuple[dict, list[dict]]:
    """Per value over the fitted units: count, mean, standard deviation, min, max, median,
    MAD; and the units whose value stands out (:data:`STAND_OUT_RULE`).
    """
    stats, stand_out = {}, []
    for q in QUANTITIES:
        pairs = [(r["file"], r[q]) for r in rows if r[q] is not None]
        if not pairs:
            continue
        x = np.array([v for _, v in pairs], dtype=float)
        median = float(np.median(x))
        mad = float(np.median(np.abs(x - median)))
        stats[q] = {
            "n": int(x.size),
            "mean": float(x.mean()),
            "std": float(x.std(ddof=1)) if x.size > 1 else None,
            "min": float(x.min()),
            "max": float(x.max()),
            "median": median,
            "mad": mad,
        }
        if x.size < STAND_OUT_MIN_UNITS or mad == 0:
            continue
        for (file, value), z in zip(pairs, 0.6745 * (x - median) / mad):
            if abs(z) > STAND_OUT_LIMIT:
                stand_out.append({"file": file, "value": q, "x": value, "z": round(float(z), 2)})
    return stats, stand_out


def summarise(records: list[dict], spec: Spec | None) -> dict:
    """Rows, counts, statistics and stand-out units of a batch (what the results hold)."""
    rows = [_row(r, spec) for r in records]
    stats, stand_out = statistics(rows)
    by_file = {}
    for item in stand_out:
        by_file.setdefault(item["file"], []).append(f"{item['value']} (z = {item['z']:+.1f})")
    for row in rows:
        row["stands_out"] = ", ".join(by_file.get(row["file"], []))
    counts = {}
    for row in rows:
        word = row["verdict"] or row["status"]
        counts[word] = counts.get(word, 0) + 1
    return {
        "fitkit_version": __version__,
        "rule": spec.rule_text() if spec else "no specification given",
        "spec": spec.source if spec else None,
        "counts": counts,
        "statistics": stats,
        "stand_out_rule": STAND_OUT_RULE,
        "stand_out": stand_out,
        "rows": rows,
    }


RESULTS_CSV, RESULTS_JSON = "results.csv", "results.json"
_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def safe_cell(value):
    """A CSV cell that a spreadsheet will not run as a formula.

    Text starting with = + - @ tab or carriage return gets a leading ``'`` (OWASP,
    "CSV Injection", from memory); numbers and empty cells pass unchanged.

    Examples
    --------
    >>> safe_cell("=HYPERLINK(1)"), safe_cell(-1.5), safe_cell(None)
    ("'=HYPERLINK(1)", -1.5, '')
    """
    if value is None:
        return ""
    if isinstance(value, str) and value.startswith(_FORMULA_STARTS):
        return "'" + value
    return value


def write_results(out: Path, summary: dict, settings: dict) -> list[Path]:
    """Write ``results.csv`` and ``results.json`` in ``out`` (each atomically)."""
    rows = summary["rows"]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(list(rows[0]))
    for row in rows:
        writer.writerow([safe_cell(v) for v in row.values()])
    write_atomic(out / RESULTS_CSV, buffer.getvalue())
    data = {**summary, "settings": settings}
    write_atomic(out / RESULTS_JSON, json.dumps(data, indent=2, allow_nan=False, default=str))
    return [out / RESULTS_CSV, out / RESULTS_JSON]
