"""The readable table printed by ``fitkit fit``."""

from __future__ import annotations

from fitkit.result import QUANTITIES, CircuitFit
from fitkit.setups import Setup
from fitkit.topologies import TOPOLOGIES
from fitkit.version import __version__


def fit_table(fit: CircuitFit) -> str:
    """Values with uncertainties, the setup assumed, fit quality, warnings, and the gaps."""
    s = fit.stats
    setup = Setup(**fit.setup)
    lines = [
        f"fitkit {__version__}: {TOPOLOGIES[fit.topology].label} fitted to {fit.sweep['source']}",
        f"  sweep    {_sweep_line(fit.sweep)}",
        f"  bench    {setup.describe()}",
        *(["           (the bench values' stated +/- are in every uncertainty below)"]
          if setup.uncertainty else []),
        f"  noise    {s.noise}",
    ]  # fmt: skip
    if fit.choice:
        lines.append(f"  model    {fit.choice}")
    for name in fit.known:
        q = fit.quantities[name]
        lines.append(f"  known    {name} = {q.text()} (given, not fitted)")
    lines.append("")
    shown = [n for n in QUANTITIES if n in fit.quantities]
    width = max(len(QUANTITIES[n][1]) for n in shown)
    for name in shown:
        lines.append(f"  {QUANTITIES[name][1]:<{width}}  {fit.quantities[name].text()}")
    corr = fit.correlation("L", "C")
    if corr is not None and "L" not in fit.known and "C" not in fit.known:
        lines.append(f"  {'correlation of L and C':<{width}}  {corr:+.3f}")
    lines.append("")
    verdict = "converged" if s.converged else "did NOT converge"
    rms = f"{s.rms:.3g} {s.rms_unit}".rstrip()
    lines.append(
        f"  fit      {s.used_points} of {s.points} points, reduced chi-square {s.redchi:.2f}, "
        f"residual RMS {rms}, {verdict}"
    )
    if s.outliers_hz:
        shown = "; ".join(s.outlier_reasons[:5] or [f"{f:.6g} Hz" for f in s.outliers_hz[:5]])
        more = " ..." if len(s.outliers_hz) > 5 else ""
        lines.append(f"  refit    without {len(s.outliers_hz)} outlying point(s): {shown}{more}")
    for text in s.warnings:
        lines.append(f"  warning: {text}")
    if fit.undetermined:
        names = ", ".join(QUANTITIES[u["name"]][1] for u in fit.undetermined)
        lines.append(f"  not determined by this sweep: {names}")
        seen = set()
        for u in fit.undetermined:
            if u["reason"] in seen:
                continue
            seen.add(u["reason"])
            lines.append(f"    why: {u['reason']}")
            lines.append(f"    fix: {u['remedy']}")
    for note in fit.sweep.get("notes", []):
        lines.append(f"  reader:  {note}")
    for key, value in fit.sweep.get("metadata", {}).items():
        if key in _FORMAT_FACTS:
            continue
        if key == "reference_ohm" and fit.setup["bench"] not in ("divider", "across", "impedance"):
            lines.append(f"  the file states its reference impedance, {value} ohm (used)")
            continue
        lines.append(f"  the file states {key} = {value} (shown for you to confirm; not used)")
    return "\n".join(lines)


#: what a Touchstone file says about its own layout, not about the bench
_FORMAT_FACTS = {"touchstone_version", "ports", "parameter_written", "format"}


def _sweep_line(info: dict) -> str:
    from fitkit.units import format_quantity

    form = "complex" if info["complex"] else "magnitude only"
    if info.get("recorded_in_db"):
        form += ", recorded in dB"
    return (
        f"{info['points']} points, {format_quantity(info['f_min_hz'], 'Hz')} to "
        f"{format_quantity(info['f_max_hz'], 'Hz')}, {info['kind']} ({form})"
    )


def drift_table(data: dict) -> str:
    """A saved drift diagnosis (``drift --json``) as lines: each change with its
    uncertainty and z, then the reading, the correction and any further entries."""
    from fitkit.report.drift_page import change_rows, plain_text

    extra, rows = change_rows(data.get("changes", {}))
    unit, reference = (_source(data.get(side)) for side in ("unit", "reference"))
    lines = [f"{unit} against {reference}"] if unit and reference else ["drift"]
    width = max((len(r["label"]) for r in rows), default=0)
    for r in rows:
        flag = "changed" if r["changed"] else "unchanged"
        more = "".join(f"  {name} {cell}" for name, cell in zip(extra, r["extra"]))
        lines.append(
            f"  {r['label']:<{width}}  {r['reference']} -> {r['now']}  change {r['change']} "
            f"({r['relative']})  z = {r['z']}  {flag}{more}"
            + (f"  doubtful: {r['doubtful']}" if r["doubtful"] else "")
        )
    lines.append("  (a change counts when |z| > 2; u = sqrt(u^2 + u_ref^2))")
    lines += [f"  reading: {line}" for line in data.get("reading", [])]
    for key, value in data.items():
        if key not in ("changes", "reading", "unit", "reference"):
            lines.append(f"  {key.replace('_', ' ')}: {plain_text(value)}")
    return "\n".join(lines)


def _source(side) -> str:
    """Where one side of a saved drift diagnosis came from (its ``source``)."""
    return str(side.get("source", "")) if isinstance(side, dict) else str(side or "")
