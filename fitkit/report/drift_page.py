"""The HTML page of a drift diagnosis: both sweeps overlaid, the changes with their
uncertainties, the reading and the correction (when the diagnosis gives one).
"""

from __future__ import annotations

from pathlib import Path

from fitkit.report.axes import figure_bytes
from fitkit.report.html import fit_facts
from fitkit.report.pages import data_uri, render
from fitkit.result import QUANTITIES, CircuitFit
from fitkit.units import format_quantity

#: change fields shown in their own columns; any other field gets a column of its own
KNOWN_FIELDS = {"unit", "reference", "reference_u", "value", "value_u", "change", "change_u",
                "relative", "relative_u", "z", "significant", "doubtful"}  # fmt: skip


def plain_text(value, unit: str = "") -> str:
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        return format_quantity(float(value), unit)
    if isinstance(value, (list, tuple)):
        return "; ".join(plain_text(v, unit) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k}: {plain_text(v, unit)}" for k, v in value.items())
    return "" if value is None else str(value)


def change_rows(changes: dict) -> tuple[list[str], list[dict]]:
    """(extra column names, one row per changed value) from a drift result's changes."""
    extra = sorted({k for c in changes.values() for k in c} - KNOWN_FIELDS)
    rows = []
    for name, c in changes.items():
        unit, label = QUANTITIES.get(name, ("", name))
        ref_u, now_u = c.get("reference_u") or None, c.get("value_u") or None
        rel_u = c["change_u"] / abs(c["reference"]) * 100 if c.get("reference") else None
        z = c.get("z")
        rows.append(
            {
                "label": label,
                "reference": format_quantity(c["reference"], unit, ref_u),
                "now": format_quantity(c["value"], unit, now_u),
                "change": format_quantity(c["change"], unit, c.get("change_u") or None),
                "relative": format_quantity(c["relative"] * 100, "", rel_u or None) + " %",
                "z": "" if z is None else f"{z:+.1f}",
                "changed": bool(c.get("significant")),
                "doubtful": c.get("doubtful") or "",
                "extra": [plain_text(c.get(k), unit) for k in extra],
            }
        )
    return extra, rows


def drift_report(unit: CircuitFit, reference: CircuitFit, result: dict) -> str:
    """The HTML page of a drift diagnosis.

    Parameters
    ----------
    unit, reference : CircuitFit
        The two fits (a plot is drawn of those made from a sweep).
    result : dict
        The diagnosis as ``fitkit drift --json`` prints it: ``changes`` (per value),
        ``reading`` (lines), and whatever else it holds (``correction``, ...), each shown.

    Returns
    -------
    str
        The page.
    """
    from fitkit.report.plots import drift_figure

    fig = drift_figure(unit, reference)
    extra, rows = change_rows(result.get("changes", {}))
    others = {k: v for k, v in result.items() if k not in ("changes", "reading")}
    correction = others.pop("correction", None)
    warnings = [
        (who, text)
        for who, fit in (("now", unit), ("reference", reference))
        for text in fit.stats.warnings
    ]
    doubtful = [
        (who, QUANTITIES[n][1], q.doubtful)
        for who, fit in (("now", unit), ("reference", reference))
        for n, q in fit.quantities.items()
        if getattr(q, "doubtful", "")
    ]
    return render(
        "drift.html",
        title=f"fitkit drift report: {Path(unit.sweep.get('source', '')).name}",
        unit_facts=fit_facts(unit),
        reference_facts=fit_facts(reference),
        plot=data_uri(figure_bytes(fig)) if fig is not None else None,
        extra=extra,
        rows=rows,
        reading=result.get("reading", []),
        correction=[correction] if isinstance(correction, str) else correction,
        others=[(k, plain_text(v)) for k, v in others.items()],
        warnings=warnings,
        doubtful=doubtful,
    )


def diagnose(unit: CircuitFit, reference: CircuitFit) -> dict:
    """The drift result of two fits, as ``fitkit drift --json`` gives it (changes, reading).

    Raises
    ------
    InputError
        When the two fits share no determined value.
    """
    from fitkit.drift import compare, fit_values, reading
    from fitkit.errors import InputError

    changes = compare(fit_values(unit), fit_values(reference))
    if not changes:
        raise InputError(
            "the unit and the reference share no determined value",
            remedy="compare sweeps taken on the same bench, or fits that determine R, L, C",
            path=unit.sweep.get("source"),
        )
    return {"changes": {c.name: c.to_dict() for c in changes}, "reading": reading(changes)}
