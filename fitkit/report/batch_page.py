"""The HTML page of a batch: counts, limits, a chart per judged value, one row per unit
(failures and undecided first), statistics and the fit plots.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

from fitkit.errors import FitkitError
from fitkit.report.html import plot_png, split_verdict, write_report
from fitkit.report.pages import data_uri, render
from fitkit.result import QUANTITIES
from fitkit.spec import Spec, load_spec
from fitkit.units import format_quantity

#: at most this many plots in a batch report (each unit is refitted to draw it)
MAX_BATCH_PLOTS = 60
#: the order of the rows: what needs a person's attention first
ORDER = {"fail": 0, "undecided": 1, "not fitted": 2}
#: values shown for every unit, judged or not
SHOWN = ("L", "C", "R", "f0", "Q", "Q_loaded")


def unit_names(files: list[str]) -> dict:
    """``{file: name}``: each path relative to the folder all the files share."""
    if not files:
        return {}
    parents = [os.path.dirname(os.path.abspath(f)) for f in files]
    root = os.path.commonpath(parents)
    return {f: os.path.relpath(os.path.abspath(f), root) for f in files}


def batch_spec(summary: dict) -> Spec | None:
    """The batch's specification read again from its file, under the rule the batch used;
    None when there was none or it cannot be read now (the page then shows no limits)."""
    if not summary.get("spec"):
        return None
    try:
        spec = load_spec(summary["spec"])
    except FitkitError:
        return None
    rule = summary.get("rule", "")
    if rule.startswith("simple"):
        return spec.with_rule("simple", None)
    k = re.search(r"k = ([0-9.]+)", rule)
    return spec.with_rule("guarded", float(k.group(1)) if k else None)


def _value_cell(row: dict, q: str) -> dict:
    value = row.get(q)
    text = "not determined"
    if value is not None:
        text = format_quantity(value, QUANTITIES[q][0], row.get(f"{q}_u"))
    shown, _, u = text.partition(" +/- ")
    return {"kind": "value", "value": shown, "u": u, "doubtful": row.get(f"{q}_doubtful") or ""}


def _columns(spec: Spec | None) -> list[tuple[str, str | None]]:
    """(quantity, spec name or None) in the table's order: judged values first."""
    judged = [(lim.quantity, lim.name) for lim in spec.limits] if spec else []
    return judged + [(q, None) for q in SHOWN if q not in {j for j, _ in judged}]


def _notes(row: dict, stand_out: list[dict]) -> list[str]:
    notes = []
    for item in stand_out:
        if item["file"] == row["file"]:
            label = QUANTITIES.get(item["value"], (None, item["value"]))[1]
            notes.append(f"stands out: {label} (z = {item['z']:+.1f})")
    notes += [f"warning: {w}" for w in (row.get("warnings") or "").split("; ") if w]
    if row.get("doubtful"):
        notes.append(f"doubtful: {row['doubtful']}")
    return notes


def _unit_rows(summary: dict, names: dict, columns: list) -> list[dict]:
    out = []
    for row in summary["rows"]:
        word = row["verdict"] or row["status"]
        cells = []
        for q, spec_name in columns:
            cells.append(_value_cell(row, q))
            if spec_name:
                verdict, detail = split_verdict(row.get(f"{spec_name}_verdict", ""))
                cells.append({"kind": "verdict", "word": verdict, "detail": detail})
        out.append(
            {
                "file": row["file"],
                "name": names[row["file"]],
                "word": word,
                "css": word.replace(" ", "-"),
                "cells": cells,
                "notes": _notes(row, summary.get("stand_out", [])),
                "reason": row.get("reason") or "",
                "sha256": row.get("sha256") or "not recorded",
                "setup_file": row.get("setup_file") or "none",
            }
        )
    return sorted(out, key=lambda r: (ORDER.get(r["word"], 3), r["name"]))


def _charts(units: list[dict], summary: dict, spec: Spec | None) -> list[dict]:
    from fitkit.report.charts import batch_chart

    if spec is None:
        return []
    k = spec.coverage if spec.rule == "guarded" and spec.coverage > 0 else 2.0
    by_file = {r["file"]: r for r in summary["rows"]}
    charts = []
    for lim in spec.limits:
        points = []
        for unit in units:
            row = by_file[unit["file"]]
            if row.get(lim.quantity) is None:
                continue
            word = split_verdict(row.get(f"{lim.name}_verdict", ""))[0]
            points.append((unit["name"], row[lim.quantity], row.get(f"{lim.quantity}_u"), word))
        if points:
            svg = batch_chart(points, lim, k)
            charts.append(
                {
                    "label": QUANTITIES[lim.quantity][1],
                    "limits": lim.describe(),
                    "uri": data_uri(svg, "image/svg+xml"),
                    "missing": len(units) - len(points),
                    "k": f"{k:g}",
                }
            )
    return charts


def _limits(spec: Spec | None) -> list[dict]:
    if spec is None:
        return []
    return [
        {
            "label": QUANTITIES[lim.quantity][1],
            "nominal": format_quantity(lim.nominal, lim.unit) if lim.nominal is not None else "",
            "limits": lim.describe(),
        }
        for lim in spec.limits
    ]


def _stats(stats: dict) -> list[list[str]]:
    rows = []
    for q, s in stats.items():
        unit = QUANTITIES[q][0]
        cells = [
            format_quantity(s[k], unit) if s[k] is not None else ""
            for k in ("mean", "std", "min", "max", "median", "mad")
        ]
        rows.append([QUANTITIES[q][1], str(s["n"]), *cells])
    return rows


def settings_text(settings: dict) -> str:
    """The batch's fit settings in words: model, setup file, overrides, noise."""
    parts = [f"circuit model {settings.get('topology', 'auto')}"]
    parts.append(f"setup file {settings.get('setup_path') or 'beside each sweep'}")
    given = {k: v for k, v in (settings.get("overrides") or {}).items() if v is not None}
    if given:
        parts.append("bench options " + ", ".join(f"{k} = {v}" for k, v in given.items()))
    if settings.get("known"):
        parts.append("known " + ", ".join(settings["known"]))
    parts.append(f"noise {settings.get('noise') or 'estimated from each fit'}")
    return "; ".join(parts)


def batch_report(summary: dict, settings: dict, plots: dict, spec: Spec | None = None) -> str:
    """The HTML page for a batch.

    Parameters
    ----------
    summary : dict
        What :meth:`fitkit.batch_results.Tally.summary` returns (or ``results.json`` holds).
    settings : dict
        The fit settings of the batch.
    plots : dict
        ``{file: PNG bytes}`` for the units to show.
    spec : Spec, optional
        The specification the batch was judged against, for its limits and the charts
        (default: read again from the file the summary names).

    Returns
    -------
    str
        The page.
    """
    spec = spec or batch_spec(summary)
    rows = summary["rows"]
    names = unit_names([r["file"] for r in rows])
    columns = _columns(spec)
    headers = []
    for q, spec_name in columns:
        headers.append(q.replace("_", " "))
        if spec_name:
            headers.append(f"{q.replace('_', ' ')} verdict")
    units = _unit_rows(summary, names, columns)
    counts = sorted(summary["counts"].items(), key=lambda c: (ORDER.get(c[0], 3), c[0]))
    fits = [
        {"name": u["name"], "uri": data_uri(plots[u["file"]])} for u in units if u["file"] in plots
    ]
    return render(
        "batch.html",
        title="fitkit batch report",
        total=len(rows),
        counts=counts,
        rule=summary["rule"],
        spec_source=summary.get("spec"),
        settings=settings_text(settings),
        limits=_limits(spec),
        charts=_charts(units, summary, spec),
        headers=headers,
        units=units,
        statistics=_stats(summary["statistics"]),
        stand_out_rule=summary["stand_out_rule"],
        fits=fits,
        fits_cut=len(plots) < sum(r["status"] == "fitted" for r in rows),
        max_plots=MAX_BATCH_PLOTS,
    )


def batch_plots(rows: list[dict], settings: dict) -> dict:
    """Refit the fitted units (up to :data:`MAX_BATCH_PLOTS`, failures first) to draw them.

    A file whose checksum no longer matches its row is not drawn.
    """
    from fitkit.batch import file_sha256, fit_with

    fitted = [r for r in rows if r["status"] == "fitted"]
    fitted.sort(key=lambda r: ORDER.get(r["verdict"], 3))
    plots = {}
    for row in fitted[:MAX_BATCH_PLOTS]:
        if file_sha256(Path(row["file"])) != row["sha256"]:
            continue
        fit, _ = fit_with(row["file"], settings)
        plots[row["file"]] = plot_png(fit)
    return plots


def write_batch_report(
    out_dir: Path, summary: dict, settings: dict, spec: Spec | None = None
) -> Path:
    """Write ``report.html`` for a batch into its output folder (the batch checked it)."""
    page = batch_report(summary, settings, batch_plots(summary["rows"], settings), spec)
    return write_report(Path(out_dir) / "report.html", page, force=True)
