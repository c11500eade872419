"""One sweep file to one fit: read, set up the bench, fit. Used by every command."""

from __future__ import annotations

from pathlib import Path

from fitkit.bench_file import build_setup, find_bench_file, known_values, load_bench_file
from fitkit.fitting import fit_sweep
from fitkit.readers import read_sweep
from fitkit.result import CircuitFit


def fit_file(
    sweep_path: str | Path,
    *,
    setup_path: str | Path | None = None,
    overrides: dict | None = None,
    known: tuple = (),
    noise: str | None = None,
    keep_outliers: bool = False,
    topology: str = "auto",
    columns: dict | None = None,
) -> tuple[CircuitFit, Path | None]:
    """Fit the sweep in a file; the setup file beside it is used unless one is given.

    Parameters
    ----------
    sweep_path : str or Path
        The sweep file.
    setup_path : str or Path, optional
        A setup file (TOML); default ``fitkit-setup.toml`` beside the sweep, if present.
    overrides : dict, optional
        Setup fields from the command line (``sense_ohm``, ``bench``, ...; raw text
        allowed, ``None`` for "not given"); they win over the setup file.
    known : tuple of str
        Known values as typed, e.g. ``("L=100u+-0.5u",)``.
    noise : str, optional
        ``"auto"`` (default: the file's per-point sigma column when it has one),
        ``"column"``, ``"estimate"``, ``"additive"``, ``"relative"`` or a stated noise
        level (see :func:`fitkit.fitting.fit_sweep`).
    keep_outliers : bool
        Keep outlying points.
    topology : str
        ``"auto"`` (fit each model, keep the best by BIC) or one of
        :data:`fitkit.topologies.TOPOLOGIES`.
    columns : dict, optional
        Column overrides for the reader; they win over the setup file's ``[columns]``.

    Returns
    -------
    (CircuitFit, Path or None)
        The fit, and the setup file used.

    Raises
    ------
    FitkitError
        Any input, setup or fit failure, with a message for the user.
    """
    bench_path = find_bench_file(sweep_path, setup_path)
    file = load_bench_file(bench_path, for_sweep=sweep_path) if bench_path else {}
    sweep = read_sweep(sweep_path, columns=columns or file.get("columns") or None)
    setup = build_setup(sweep, file.get("bench"), overrides or {})
    known_map = known_values(file.get("known"), tuple(known))
    fit = fit_sweep(
        sweep,
        setup,
        topology=topology,
        known=known_map,
        noise=noise,
        keep_outliers=keep_outliers,
    )
    return fit, bench_path
