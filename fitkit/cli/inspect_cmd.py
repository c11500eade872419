"""``fitkit inspect FILE``: show how a sweep file is read, before fitting it."""

from __future__ import annotations

import click

from fitkit.cli.base import main, reports_errors
from fitkit.cli.read_options import columns_from_options, read_options
from fitkit.noise import point_noise
from fitkit.readers import inspect_sweep
from fitkit.readers.tidy import DUPLICATES
from fitkit.units import format_quantity


@main.command("inspect")
@click.argument("file", type=click.Path(dir_okay=False))
@read_options
@click.option(
    "--duplicates",
    type=click.Choice(DUPLICATES),
    default="average",
    show_default=True,
    help="What to do with a frequency written more than once.",
)
@reports_errors
def inspect_command(file: str, duplicates: str, **options) -> None:
    """Show what was detected in FILE: columns, units, points, range, clean-up, metadata."""
    reading = inspect_sweep(file, columns=columns_from_options(**options), duplicates=duplicates)
    click.echo("\n".join(describe_reading(reading)))


def describe_reading(reading) -> list[str]:
    """The lines ``fitkit inspect`` prints for a :class:`fitkit.readers.Reading`."""
    sweep = reading.sweep
    out = [f"file:     {sweep.source}", f"format:   {reading.format}"]
    out += [f"  {key}: {value}" for key, value in reading.details.items()]
    out.append("columns:")
    width = max((len(c.name) for c in reading.columns), default=0)
    for c in reading.columns:
        use = f"{c.role} in {c.unit}" if c.role else "not used"
        out.append(f"  {c.position:>3}  {c.name:<{width}}  {use}")
    form = "complex" if sweep.is_complex else "magnitude only"
    if sweep.recorded_in_db:
        form += ", recorded in dB"
    out += [
        f"kind:     {sweep.kind} ({form})",
        f"points:   {sweep.points}",
        f"range:    {format_quantity(sweep.freq_hz[0], 'Hz')} to "
        f"{format_quantity(sweep.freq_hz[-1], 'Hz')}",
    ]
    if sweep.sigma is not None:  # how the fit will weight it by default
        out.append(f"noise:    {point_noise(sweep).describe(sweep.kind)}")
    out.append("notes:" if sweep.notes else "notes:    none")
    out += [f"  - {note}" for note in sweep.notes]
    out.append(
        "metadata (stated by the file; confirm before use):" if sweep.metadata else "metadata: none"
    )
    out += [f"  {key}: {value}" for key, value in sweep.metadata.items()]
    return out
