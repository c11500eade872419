"""A self-contained HTML report (one file, plots embedded as base64 PNG) of a fit or a batch.

Every piece of text that comes from a file (names, messages, metadata) is escaped with
:func:`html.escape`; the page holds no scripts and loads nothing from elsewhere.
"""

from __future__ import annotations

import base64
import datetime
import html
import tempfile
from pathlib import Path

from fitkit import __version__
from fitkit.errors import refuse_overwrite
from fitkit.result import QUANTITIES, CircuitFit
from fitkit.spec import Spec, judge
from fitkit.units import format_quantity

_STYLE = """
body { font-family: sans-serif; margin: 2em; max-width: 70em; color: #222; }
table { border-collapse: collapse; margin: 1em 0; }
th, td { border: 1px solid #bbb; padding: 0.25em 0.6em; text-align: left; vertical-align: top; }
th { background: #eee; }
.pass { color: #176317; font-weight: bold; }
.fail { color: #a31515; font-weight: bold; }
.undecided { color: #8a5a00; font-weight: bold; }
pre { background: #f6f6f6; padding: 0.8em; overflow-x: auto; }
code { word-break: break-all; }
img { max-width: 100%; }
"""

#: at most this many plots in a batch report (each unit is refitted to draw it)
MAX_BATCH_PLOTS = 60


def _e(value) -> str:
    return html.escape("" if value is None else str(value))


def _verdict(text: str) -> str:
    word = text.split(" ", 1)[0] if text else ""
    css = word if word in ("pass", "fail", "undecided") else ""
    return f'<span class="{css}">{_e(text)}</span>' if css else _e(text)


def _table(headers: list[str], rows: list[list[str]]) -> str:
    """A table; cells are HTML already (escape before)."""
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in row) + "</tr>" for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _page(title: str, body: str) -> str:
    made = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f"<title>{_e(title)}</title><style>{_STYLE}</style></head><body>"
        f"<h1>{_e(title)}</h1>{body}"
        f"<p><small>made by fitkit {_e(__version__)} on {made}</small></p></body></html>\n"
    )


def plot_png(fit: CircuitFit) -> bytes | None:
    """The fit plot (data, model, residuals) as PNG bytes; None when the fit has no curve."""
    if fit.model_curve is None:
        return None
    from fitkit.report.plots import plot_fit

    with tempfile.TemporaryDirectory() as tmp:
        return plot_fit(fit, Path(tmp) / "fit.png").read_bytes()


def _img(png: bytes | None, alt: str) -> str:
    if png is None:
        return "<p>No plot: a saved fit does not keep the sweep; report the sweep file.</p>"
    data = base64.b64encode(png).decode("ascii")
    return f'<img src="data:image/png;base64,{data}" alt="{_e(alt)}">'


def fit_report(fit: CircuitFit, *, spec: Spec | None = None, setup_file=None) -> str:
    """The HTML page for one fit: values, verdicts, setup, checksum, plot, fit summary.

    Parameters
    ----------
    fit : CircuitFit
        A fit; a plot is drawn when it was made from a sweep (not loaded from JSON).
    spec : Spec, optional
        A specification to judge the values against.
    setup_file : str or Path, optional
        The setup file that was used, to name it.
    """
    from fitkit.report.table import fit_table

    source = fit.sweep.get("source", "")
    verdicts = None
    if spec is not None:
        values = {n: (q.value, q.stderr) for n, q in fit.quantities.items()}
        verdicts = judge(values, spec)
    by_quantity = {}
    if verdicts:
        by_quantity = {lim.quantity: verdicts.values[lim.name].text() for lim in spec.limits}
    rows = []
    for name, (_, label) in QUANTITIES.items():
        if name not in fit.quantities:
            continue  # a value of another topology
        row = [_e(label), _e(fit.quantities[name].text())]
        if verdicts:
            row.append(_verdict(by_quantity.get(name, "")))
        rows.append(row)
    headers = ["value", "fitted"] + (["verdict"] if verdicts else [])
    body = [_facts(fit, setup_file), "<h2>Values</h2>", _table(headers, rows)]
    if verdicts:
        body.append(f"<p>Overall: {_verdict(verdicts.overall)}. Rule: {_e(spec.rule_text())}.")
        body.append(f" Specification: {_e(spec.source)}.</p>")
    body += ["<h2>Fit</h2>", _img(plot_png(fit), f"fit of {source}")]
    body += ["<h2>Fit summary</h2>", f"<pre>{_e(fit_table(fit))}</pre>"]
    return _page(f"fitkit report: {Path(source).name}", "".join(body))


def _facts(fit: CircuitFit, setup_file) -> str:
    from fitkit.setups import Setup

    facts = [
        ("sweep file", _e(fit.sweep.get("source"))),
        ("sha256", f"<code>{_e(fit.sweep.get('sha256', 'not recorded'))}</code>"),
        ("setup file", _e(setup_file or "none (defaults and options)")),
        ("bench", _e(Setup(**fit.setup).describe())),
        ("circuit model", _e(_model_text(fit))),
        ("noise", _e(fit.stats.noise)),
        ("fitkit version", _e(__version__)),
    ]
    return _table(["about", ""], [[_e(k), v] for k, v in facts])


def _model_text(fit: CircuitFit) -> str:
    from fitkit.topologies import TOPOLOGIES

    label = TOPOLOGIES[fit.topology].label
    return f"{label} ({fit.choice})" if fit.choice else label


def _value_cell(row: dict, name: str) -> str:
    value, stderr = row.get(name), row.get(f"{name}_u")
    if value is None:
        return "" if row["status"] != "fitted" else "not determined"
    return _e(format_quantity(value, QUANTITIES[name][0], stderr))


def batch_report(summary: dict, settings: dict, plots: dict) -> str:
    """The HTML page for a batch: the rule, counts, one row per input, statistics, plots.

    Parameters
    ----------
    summary : dict
        What :func:`fitkit.batch.summarise` returns (or ``results.json`` holds).
    settings : dict
        The fit settings of the batch.
    plots : dict
        ``{file: PNG bytes}`` for the units to show.
    """
    rows = summary["rows"]
    verdict_names = [k for k in (rows[0] if rows else {}) if k.endswith("_verdict")]
    shown = ["L", "C", "R", "f0_hz", "Q", "Q_loaded"]
    headers = ["file", "verdict"] + [QUANTITIES[q][1] for q in shown]
    headers += [v[: -len("_verdict")] for v in verdict_names] + ["stands out", "sha256"]
    table = []
    for row in rows:
        cells = [_e(row["file"]), _verdict(row["verdict"] or row["status"])]
        cells += [_value_cell(row, q) for q in shown]
        cells += [_verdict(row[v]) for v in verdict_names]
        cells += [_e(row["stands_out"]), f"<code>{_e(row['sha256'])}</code>"]
        table.append(cells)
    counts = ", ".join(f"{n} {_e(w)}" for w, n in sorted(summary["counts"].items()))
    body = [
        f"<p>{len(rows)} file(s): {counts}.</p>",
        f"<p>Rule: {_e(summary['rule'])}. Specification: {_e(summary.get('spec'))}.</p>",
        f"<p>Settings: {_settings_text(settings)}</p>",
        "<h2>Units</h2>",
        _table(headers, table),
    ]
    failed = [[_e(r["file"]), f"<pre>{_e(r['reason'])}</pre>"] for r in rows if r["reason"]]
    if failed:
        body += ["<h2>Files not fitted</h2>", _table(["file", "reason"], failed)]
    body += ["<h2>Statistics</h2>", _stats_table(summary["statistics"])]
    body.append(f"<p>Stand-out rule: {_e(summary['stand_out_rule'])}.</p>")
    body.append("<h2>Fits</h2>")
    for file, png in plots.items():
        body += [f"<h3>{_e(file)}</h3>", _img(png, f"fit of {file}")]
    if len(plots) < sum(r["status"] == "fitted" for r in rows):
        body.append(f"<p>Plots of the first {MAX_BATCH_PLOTS} units only.</p>")
    return _page("fitkit batch report", "".join(body))


def _stats_table(stats: dict) -> str:
    rows = []
    for q, s in stats.items():
        unit = QUANTITIES[q][0]
        cells = [
            format_quantity(s[k], unit) if s[k] is not None else ""
            for k in ("mean", "std", "min", "max", "median", "mad")
        ]
        rows.append([_e(QUANTITIES[q][1]), _e(s["n"])] + [_e(c) for c in cells])
    headers = ["value", "n", "mean", "standard deviation", "min", "max", "median", "MAD"]
    return _table(headers, rows)


def _settings_text(settings: dict) -> str:
    """The batch's fit settings in words (escaped): model, setup file, overrides, noise."""
    parts = [f"circuit model {settings.get('topology', 'auto')}"]
    parts.append(f"setup file {settings.get('setup_path') or 'beside each sweep'}")
    given = {k: v for k, v in (settings.get("overrides") or {}).items() if v is not None}
    if given:
        parts.append("bench options " + ", ".join(f"{k} = {v}" for k, v in given.items()))
    if settings.get("known"):
        parts.append("known " + ", ".join(settings["known"]))
    parts.append(f"noise {settings.get('noise') or 'estimated from each fit'}")
    return _e("; ".join(parts))


def batch_plots(rows: list[dict], settings: dict) -> dict:
    """Refit the fitted units (up to :data:`MAX_BATCH_PLOTS`) to draw their plots.

    A file whose checksum no longer matches its row is not drawn.
    """
    from fitkit.batch import file_sha256, fit_with

    plots = {}
    for row in [r for r in rows if r["status"] == "fitted"][:MAX_BATCH_PLOTS]:
        if file_sha256(Path(row["file"])) != row["sha256"]:
            continue
        fit, _ = fit_with(row["file"], settings)
        plots[row["file"]] = plot_png(fit)
    return plots


def write_report(path: str | Path, page: str, *, force: bool = False) -> Path:
    """Write the page; an existing file is replaced only with ``force``.

    Raises
    ------
    InputError
        When the file exists and ``force`` is not set.
    """
    out = Path(path)
    refuse_overwrite(out, "report", force)
    out.write_text(page, encoding="utf-8")
    return out


def write_batch_report(out_dir: Path, summary: dict, settings: dict) -> Path:
    """Write ``report.html`` for a batch into its output folder (the batch checked it)."""
    page = batch_report(summary, settings, batch_plots(summary["rows"], settings))
    return write_report(Path(out_dir) / "report.html", page, force=True)
