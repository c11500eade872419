"""The results of a batch: one row per input with values, verdicts and marks, batch
statistics, the units that stand out, identical files; written as ``results.csv`` (SI),
``results-readable.csv`` (engineering notation with units) and ``results.json``.

The statistics and counts are tallied as each fit finishes (:class:`Tally`, from the
small :func:`row_source` a worker returns), and the records are read back from disk one
at a time to write the rows, so the main process holds a few numbers per input, not the
inputs' fits: its memory stays flat in the number of sweeps.
"""

from __future__ import annotations

import csv
import json
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from fitkit.batch_inputs import Inputs
from fitkit.batch_output import (
    FITTED,
    RECORDS_DIR,
    RESULTS_CSV,
    RESULTS_JSON,
    RESULTS_READABLE,
    atomic_file,
    load_record,
    record_file,
)
from fitkit.names import QUANTITIES, renamed_key, upgrade_entries, upgrade_fit
from fitkit.spec import Spec, judge
from fitkit.units import format_quantity
from fitkit.version import __version__

_NAMES = list(QUANTITIES)

#: Iglewicz & Hoaglin (1993), "How to Detect and Handle Outliers", modified z-score
#: M = 0.6745 (x - median) / MAD, flag |M| > 3.5 (from memory)
STAND_OUT_LIMIT = 3.5
STAND_OUT_MIN_UNITS = 5
STAND_OUT_RULE = (
    f"modified z-score |0.6745 (x - median) / MAD| > {STAND_OUT_LIMIT} (Iglewicz and Hoaglin, "
    f"1993), for values determined in at least {STAND_OUT_MIN_UNITS} units"
)


def _values(fit: dict | None) -> dict:
    """``{quantity: (value, u)}`` from a saved fit dict (empty if not fitted)."""
    if not fit:
        return {}
    entries = {**fit["values"], **fit["derived"]}
    return {q: (e["value"], e["u"]) for q, e in entries.items()}


def _outside_text(outside: dict) -> str:
    bound = outside.get("bound_hz")
    where = f" ({outside['side']} {format_quantity(bound, 'Hz')})" if bound else ""
    return f"resonance outside the sweep, {outside['side']} it{where}"


def make_row(record: dict, spec: Spec | None, record_name: str = "") -> dict:
    """One input's row: file, checksum, status, verdict, reason, every value in SI with
    its standard uncertainty, a verdict per specified value, marks (stand-out, fit
    warnings, doubtful values, identical files), the setup file and the record."""
    fit = upgrade_fit(record.get("fit"))  # a record of an earlier version keeps its names
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
        elif record.get("outside"):
            row["verdict"] = "fail"
            row["reason"] = f"{_outside_text(record['outside'])}: {row['reason']}"
    row["stands_out"] = ""
    row["warnings"] = "; ".join(fit["fit"]["warnings"]) if fit else ""
    doubtful = upgrade_entries(record.get("doubtful") or {})
    row["doubtful"] = "; ".join(f"{name}: {why}" for name, why in doubtful.items())
    row["same_bytes_as"] = ""
    row["setup_file"] = record.get("setup_file")
    row["record"] = f"{RECORDS_DIR}/{record_name}" if record_name else ""
    return row


def statistics(rows: list[dict]) -> tuple[dict, list[dict]]:
    """Per value over the fitted units: count, mean, standard deviation, min, max, median,
    MAD; and the units whose value stands out (:data:`STAND_OUT_RULE`).

    Parameters
    ----------
    rows : list of dict
        ``file`` and a value (or None) per quantity.
    """
    table = np.array([[_number(r.get(q)) for q in _NAMES] for r in rows], dtype=float)
    return _statistics(table.reshape(len(rows), len(_NAMES)), [r["file"] for r in rows])


def _number(x) -> float:
    return np.nan if x is None else float(x)


def _statistics(table: np.ndarray, files: list[str]) -> tuple[dict, list[dict]]:
    stats, stand_out = {}, []
    for j, q in enumerate(_NAMES):
        column = table[:, j]
        index = np.flatnonzero(np.isfinite(column))
        if index.size == 0:
            continue
        x = column[index]
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
        for i, z in zip(index, 0.6745 * (x - median) / mad):
            if abs(z) > STAND_OUT_LIMIT:
                value = float(column[i])
                stand_out.append({"file": files[i], "value": q, "x": value, "z": round(z, 2)})
    return stats, stand_out


def _notes(row: dict, record: dict) -> list[dict]:
    """What the printed summary says about one unit (nothing for a plain pass)."""
    file, notes = row["file"], []
    if row["verdict"] in ("fail", "undecided"):
        why = [
            f"{k[:-8]} {v}"
            for k, v in row.items()
            if k.endswith("_verdict") and v not in ("", "pass")
        ]
        if not why and record.get("outside"):
            why = [_outside_text(record["outside"])]
        notes.append({"file": file, "kind": row["verdict"], "text": "; ".join(why)})
    elif row["status"] != FITTED:
        notes.append({"file": file, "kind": "not fitted", "text": _first_line(record, file)})
    for kind in ("warnings", "doubtful"):
        if row[kind]:
            notes.append({"file": file, "kind": kind, "text": row[kind]})
    return notes


def _not_a_pass(key: str, verdict) -> bool:
    return key.endswith("_verdict") and verdict not in ("", "pass")


def _first_line(record: dict, file: str) -> str:
    """The first line of a record's reason, without the file name it starts with."""
    reason = record.get("reason", "")
    if file and reason.startswith(file):
        reason = reason[len(file) :].lstrip(":, ")
    return reason.split("\n")[0]


def _records(inputs: Inputs, out: Path, only=None) -> Iterator[tuple[int, dict, str]]:
    """(index, record, record file name) of each input (or of the indices ``only``)."""
    for i in range(len(inputs.files)) if only is None else only:
        path = record_file(out, inputs.files[i], inputs.root)
        yield i, load_record(path) or _lost_record(inputs.files[i]), path.name


def _lost_record(path: Path) -> dict:
    reason = f"{path}: its fit record is missing or damaged\n  fix: run again with --resume"
    return {"file": str(path), "status": "failed", "reason": reason}


def _same_bytes(inputs: Inputs, out: Path, prefix: np.ndarray, known: np.ndarray) -> list:
    """Groups of inputs with identical bytes: candidates share the first 64 bits of their
    SHA-256; the whole checksum, read again from their records, decides."""
    _, inverse, counts = np.unique(prefix, return_inverse=True, return_counts=True)
    candidates = np.flatnonzero(known & (counts[inverse] > 1))
    groups: dict[str, list[str]] = {}
    for i, record, _ in _records(inputs, out, only=candidates.tolist()):
        groups.setdefault(record.get("sha256") or "", []).append(str(inputs.files[i]))
    return [files for sha, files in groups.items() if sha and len(files) > 1]


def row_source(record: dict) -> dict:
    """A record with only what :func:`make_row` reads from its fit (values, uncertainties
    and warnings; not the covariance, bench or sweep details): small enough to pass
    from a worker process as each fit finishes."""
    fit = record.get("fit")
    if not fit:
        return record
    slim = {"values": fit["values"], "derived": fit["derived"]}
    if "format" in fit:  # a record of today's layout needs no upgrade in make_row
        slim["format"] = fit["format"]
    return {**record, "fit": {**slim, "fit": {"warnings": fit["fit"]["warnings"]}}}


class Tally:
    """Counts, statistics, stand-out units, identical files and per-unit notes of a batch
    (what ``results.json`` holds besides the rows), gathered record by record in any
    order (as fits finish). It holds a few numbers per input (the values for the
    statistics, the first bits of each checksum) and the notes of units that are not a
    plain pass.

    Parameters
    ----------
    inputs : Inputs
        The batch's inputs; records are added by their index in ``inputs.files``.
    spec : Spec or None
        The specification the units are judged against.
    """

    def __init__(self, inputs: Inputs, spec: Spec | None) -> None:
        n = len(inputs.files)
        self.inputs, self.spec = inputs, spec
        self.table = np.full((n, len(_NAMES)), np.nan)
        self.prefix, self.known = np.zeros(n, dtype=np.uint64), np.zeros(n, dtype=bool)
        self.counts: dict[str, int] = {}
        self.notes: dict[int, list] = {}

    def add(self, index: int, record: dict) -> None:
        """Count one input's record (a whole record or its :func:`row_source`)."""
        row = make_row(record, self.spec)
        self.table[index] = [_number(row[q]) for q in _NAMES]
        word = row["verdict"] or row["status"]
        self.counts[word] = self.counts.get(word, 0) + 1
        notes = _notes(row, record)
        if notes:
            self.notes[index] = notes
        if row["sha256"]:
            self.prefix[index], self.known[index] = int(row["sha256"][:16], 16), True

    def summary(self, out: Path) -> dict:
        """The summary, once every input has been added.

        Returns
        -------
        dict
            ``fitkit_version``, ``rule``, ``spec``, ``counts``, ``statistics``,
            ``stand_out_rule``, ``stand_out``, ``same_bytes`` (lists of files with
            identical bytes), ``marks`` (units with fit warnings, with doubtful values,
            identical files), ``notes`` (per unit: file, kind, text), ``skipped``
            (folders not searched).
        """
        inputs, spec = self.inputs, self.spec
        notes = [note for i in sorted(self.notes) for note in self.notes[i]]
        stats, stand_out = _statistics(self.table, [str(f) for f in inputs.files])
        same_bytes = _same_bytes(inputs, out, self.prefix, self.known)
        marks = {
            "fit warnings": sum(1 for n in notes if n["kind"] == "warnings"),
            "doubtful values": sum(1 for n in notes if n["kind"] == "doubtful"),
            "identical files": sum(len(group) for group in same_bytes),
        }
        return {
            "fitkit_version": __version__,
            "rule": spec.rule_text() if spec else "no specification given",
            "spec": spec.source if spec else None,
            "counts": self.counts,
            "marks": marks,
            "statistics": stats,
            "stand_out_rule": STAND_OUT_RULE,
            "stand_out": stand_out,
            "same_bytes": same_bytes,
            "notes": notes,
            "skipped": list(inputs.skipped),
        }


def rows(inputs: Inputs, out: Path, spec: Spec | None, summary: dict) -> Iterator[dict]:
    """The rows of a batch, one record read at a time, with stand-out values and
    identical files filled in from the summary."""
    stand_out, same = {}, {}
    for item in summary["stand_out"]:
        stand_out.setdefault(item["file"], []).append(f"{item['value']} (z = {item['z']:+.1f})")
    for group in summary["same_bytes"]:
        for file in group:
            same[file] = [f for f in group if f != file]
    for _, record, name in _records(inputs, out):
        row = make_row(record, spec, name)
        row["stands_out"] = ", ".join(stand_out.get(row["file"], []))
        row["same_bytes_as"] = "; ".join(same.get(row["file"], []))
        yield row


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


def readable(row: dict) -> dict:
    """A row for people: each value with its uncertainty in engineering notation with
    units (``470.12 uH +/- 0.13 uH``) in one column, no separate uncertainty column."""
    out = {}
    for key, value in row.items():
        if key in QUANTITIES:
            unit, u = QUANTITIES[key][0], row[f"{key}_u"]
            out[key] = "" if value is None else format_quantity(value, unit, u)
        elif not (key.endswith("_u") and key[:-2] in QUANTITIES):
            out[key] = value
    return out


def write_results(
    out: Path, inputs: Inputs, spec: Spec | None, summary: dict, settings: dict
) -> list[Path]:
    """Write ``results.csv``, ``results-readable.csv`` and ``results.json`` in ``out``,
    each atomically, streaming the rows.

    Raises
    ------
    InputError
        When a file cannot be written (its temporary file is removed).
    """
    paths = [out / RESULTS_CSV, out / RESULTS_READABLE, out / RESULTS_JSON]
    head = json.dumps({**summary, "settings": settings}, indent=2, allow_nan=False, default=str)
    with (
        atomic_file(paths[0], newline="") as si,
        atomic_file(paths[1], newline="") as people,
        atomic_file(paths[2]) as js,
    ):
        si_csv, people_csv = (
            csv.writer(si, lineterminator="\n"),
            csv.writer(people, lineterminator="\n"),
        )
        js.write(head[: head.rindex("\n}")] + ',\n  "rows": [')
        for i, row in enumerate(rows(inputs, out, spec, summary)):
            nice = readable(row)
            if i == 0:
                si_csv.writerow(list(row))
                people_csv.writerow(list(nice))
            si_csv.writerow([safe_cell(v) for v in row.values()])
            people_csv.writerow([safe_cell(v) for v in nice.values()])
            js.write(("\n    " if i == 0 else ",\n    ") + json.dumps(row, allow_nan=False))
        js.write("\n  ]\n}\n")
    return paths


def load_results(out: Path) -> dict:
    """``results.json`` of a batch folder (for the HTML report), in today's names: the
    columns and values an earlier version wrote as ``f0_hz`` are read as ``f0``.

    Raises
    ------
    FileNotFoundError, ValueError, KeyError
        When the file is missing or is not a batch's results.
    """
    data = upgrade_entries(json.loads((out / RESULTS_JSON).read_text(encoding="utf-8")))
    for item in data.get("stand_out", []):
        item["value"] = renamed_key(item["value"])
    return data
