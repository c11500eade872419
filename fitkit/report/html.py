"""Self-contained HTML pages (one file, plots embedded) of a fit, a batch and a drift.

The pages are rendered from the templates in ``templates/`` (see :mod:`fitkit.report.pages`);
this module gathers what they show. The pages hold no scripts and load nothing from elsewhere.
"""

from __future__ import annotations

from pathlib import Path

from fitkit.errors import refuse_overwrite
from fitkit.report.axes import figure_bytes
from fitkit.report.pages import data_uri, render
from fitkit.result import QUANTITIES, CircuitFit
from fitkit.spec import Spec, judge
from fitkit.version import __version__


def plot_png(fit: CircuitFit) -> bytes | None:
    """The fit plot (data, model, residuals) as PNG bytes; None when the fit has no curve."""
    if fit.model_curve is None:
        return None
    from fitkit.report.plots import fit_figure

    return figure_bytes(fit_figure(fit))


def split_verdict(text: str) -> tuple[str, str]:
    """``'fail (2.44 nF above ...)'`` -> ``('fail', '2.44 nF above ...')``."""
    word, _, detail = (text or "").partition(" (")
    return word, detail[:-1] if detail.endswith(")") else detail


def fit_rows(fit: CircuitFit, spec: Spec | None = None) -> list[dict]:
    """One entry per reported value: label, text, doubtful mark, limits and verdict."""
    verdicts, limits = {}, {}
    if spec is not None:
        values = {n: (q.value, q.stderr) for n, q in fit.quantities.items()}
        judged = judge(values, spec)
        for lim in spec.limits:
            verdicts[lim.quantity] = judged.values[lim.name]
            limits[lim.quantity] = lim.describe()
    rows = []
    for name, (_, label) in QUANTITIES.items():
        if name not in fit.quantities:
            continue  # a value of another topology
        q = fit.quantities[name]
        verdict = verdicts.get(name)
        rows.append(
            {
                "name": name,
                "label": label,
                "text": q.text(),
                "doubtful": getattr(q, "doubtful", ""),
                "limits": limits.get(name, ""),
                "verdict": verdict.word if verdict else "",
                "verdict_detail": verdict.detail if verdict else "",
            }
        )
    return rows


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

    Returns
    -------
    str
        The page.
    """
    from fitkit.report.table import fit_table

    source = fit.sweep.get("source", "")
    overall = ""
    if spec is not None:
        overall = judge({n: (q.value, q.stderr) for n, q in fit.quantities.items()}, spec).overall
    return render(
        "fit.html",
        title=f"fitkit report: {Path(source).name}",
        source=source,
        facts=fit_facts(fit, setup_file),
        rows=fit_rows(fit, spec),
        judged=spec is not None,
        overall=overall,
        rule=spec.rule_text() if spec else "",
        spec_source=spec.source if spec else "",
        warnings=list(fit.stats.warnings),
        plot=data_uri(plot_png(fit)),
        summary=fit_table(fit),
    )


def fit_facts(fit: CircuitFit, setup_file=None) -> list[tuple[str, str, bool]]:
    """(label, text, shown as code) of where a fit came from."""
    from fitkit.setups import Setup

    return [
        ("sweep file", str(fit.sweep.get("source")), False),
        ("sha256", str(fit.sweep.get("sha256", "not recorded")), True),
        ("setup file", str(setup_file or "none (defaults and options)"), False),
        ("bench", Setup(**fit.setup).describe(), False),
        ("circuit model", model_text(fit), False),
        ("noise", fit.stats.noise, False),
        ("fitkit version", __version__, False),
    ]


def model_text(fit: CircuitFit) -> str:
    """The circuit model's name and why it was chosen."""
    from fitkit.topologies import TOPOLOGIES

    label = TOPOLOGIES[fit.topology].label
    return f"{label} ({fit.choice})" if fit.choice else label


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


def fit_fragment(fit: CircuitFit) -> str:
    """A fit as one HTML table, for a notebook cell (``CircuitFit._repr_html_``)."""
    s = fit.stats
    verdict = "converged" if s.converged else "did NOT converge"
    return render(
        "circuit_fit.html",
        model=model_text(fit),
        source=fit.sweep.get("source", ""),
        rows=fit_rows(fit),
        stats=f"{s.used_points} of {s.points} points, reduced chi-square {s.redchi:.2f}, "
        f"{verdict}; noise {s.noise}",
        warnings=list(s.warnings),
    )
