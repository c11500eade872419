"""``fitkit drift``: compare a unit with a reference and say which part changed."""

from __future__ import annotations

import json
from pathlib import Path

import click

from fitkit.batch import fit_with
from fitkit.cli import checks
from fitkit.cli.base import main, reports_errors
from fitkit.cli.batch_cmd import fit_settings
from fitkit.cli.fit_cmd import bench_options
from fitkit.drift import (
    SIGNIFICANT_Z,
    Side,
    compare,
    corrections,
    one_bench,
    reading,
    side_of_fit,
    signed_percent,
)
from fitkit.errors import InputError
from fitkit.names import current_name
from fitkit.result import QUANTITIES, load_fit
from fitkit.spec import SPEC_NAMES, load_spec
from fitkit.units import format_quantity, parse_quantity


def _side_of(path: str, fit_options: dict) -> Side:
    """A saved fit (.json) or a sweep fitted now, with its warnings."""
    if Path(path).suffix.lower() == ".json":
        return side_of_fit(load_fit(path), path)
    return side_of_fit(fit_with(path, fit_options)[0], path)


def _nominals(typed: tuple, spec_file: str | None) -> Side:
    out = {}
    if spec_file:
        out.update({q: (v, 0.0) for q, v in load_spec(spec_file).nominals().items()})
    for item in typed:
        name, sep, text = item.partition("=")
        name = current_name(name.strip(), "--nominal")
        if not sep or name not in SPEC_NAMES:
            raise InputError(
                f"--nominal {item!r} is not NAME=VALUE",
                remedy=f"write e.g. --nominal C=2.2n; NAME one of {', '.join(SPEC_NAMES)}",
            )
        quantity, unit = SPEC_NAMES[name]
        value = parse_quantity(text, unit, what=f"--nominal {name}")
        if not value > 0:
            raise InputError(
                f"--nominal {item!r}: a nominal value must be above 0",
                remedy=f"write the value the part should have, e.g. --nominal {name}="
                f"{'2.2n' if name == 'C' else '100'}",
            )
        out[quantity] = (value, 0.0)
    where = ", ".join(([spec_file] if spec_file else []) + (["--nominal"] if typed else []))
    return Side(f"nominal values ({where})", out)


@main.command("drift")
@click.argument("unit")
@click.option("--against", "reference", help="Reference: an earlier fit (JSON) or a sweep.")
@click.option(
    "--nominal", multiple=True, metavar="NAME=VALUE", help="A nominal value, e.g. C=2.2n."
)
@click.option("--spec", "spec_file", type=click.Path(dir_okay=False), help="Nominals from a spec.")
@bench_options
@click.option(
    "--noise", callback=checks.noise, help="Stated noise for sweeps (as for 'fitkit fit')."
)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object.")
@reports_errors
def drift_command(unit, reference, nominal, spec_file, noise, as_json, **opts):
    """Compare UNIT (a sweep or a saved fit) with a reference and read what changed.

    The reference is --against (the unit's earlier fit, or a golden unit's sweep or fit)
    or nominal values (--nominal, --spec; taken as exact). Each change comes with its
    combined uncertainty sqrt(u^2 + u_ref^2) and z; |z| > 2 counts as a change.
    """
    if bool(reference) == bool(nominal or spec_file):
        raise InputError(
            "give one reference",
            remedy="use --against FIT_OR_SWEEP, or nominal values (--nominal, --spec)",
        )
    fit_options = fit_settings(opts, noise)
    ref = _side_of(reference, fit_options) if reference else _nominals(nominal, spec_file)
    now = _side_of(unit, fit_options)
    changes = compare(now, ref)
    if not changes:
        raise InputError(
            "the unit and the reference share no determined value",
            remedy="give nominals for values the unit's sweep determines (f0, Q_loaded, ...)",
            path=unit,
        )
    words, fixes = reading(changes), corrections(changes)
    if as_json:
        data = {
            "unit": now.to_dict(),
            "reference": ref.to_dict(),
            "one_bench": one_bench(now, ref),
            "changes": {c.name: c.to_dict() for c in changes},
            "reading": words,
            "corrections": fixes,
        }
        click.echo(json.dumps(data, indent=2, allow_nan=False))
        return
    click.echo("\n".join(drift_lines(now, ref, changes, words, fixes)))


def drift_lines(now: Side, ref: Side, changes: list, words: list, fixes: list) -> list[str]:
    """The printed comparison: both sources, a row per value, warnings, reading, corrections."""
    lines = [f"now       {now.source}", f"reference {ref.source}", ""]
    for c in changes:
        unit_name, label = QUANTITIES[c.name]
        change = format_quantity(c.delta, unit_name, c.u or None)
        relative = signed_percent(c.relative, c.u / abs(c.reference))
        lines.append(
            f"  {label:<33} {format_quantity(c.reference, unit_name, c.reference_u or None):>28} "
            f"-> {format_quantity(c.value, unit_name, c.value_u or None):>28}  change "
            f"{('+' if c.delta > 0 else '') + change:>27} ({relative})  z = {c.z:+.1f}"
            + ("  doubtful" if c.doubtful else "")
        )
    lines.append(f"  (a change counts when |z| > {SIGNIFICANT_Z:g}; u = sqrt(u^2 + u_ref^2))")
    if one_bench(now, ref):
        lines.append(
            "  (one bench for both sweeps: the stated uncertainties of its values scale both "
            "alike and leave the change; the +/- above are the sweeps' own)"
        )
    for c in changes:
        if c.doubtful:
            lines.append(f"  doubtful: {QUANTITIES[c.name][1]}: {c.doubtful}")
    for side, which in ((now, "now"), (ref, "reference")):
        lines.extend(f"  warning ({which}, {side.source}): {w}" for w in side.warnings)
    lines.extend(f"  reading: {line}" for line in words)
    lines.extend(f"  to restore: {line}" for line in fixes)
    return lines
