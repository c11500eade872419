"""Loaded by the batch's fork server before it forks the workers: reads and fits one small
invented sweep, so that every worker starts with the modules imported, the regular
expressions compiled and the numerical libraries' first-call set-up done (about 0.1 s of
CPU a worker otherwise, paid here once per batch).

The warm-up is a courtesy: if it fails, the workers simply start cold.
"""

from __future__ import annotations

import contextlib
import tempfile
import warnings
from pathlib import Path

import numpy as np

from fitkit.batch import fit_with, quiet_c_output
from fitkit.circuits import series_rlc

#: an invented series R-L-C (5 ohm, 100 uH, 1 nF: f0 about 503 kHz) behind a 47 ohm divider
_SETUP = '[bench]\narrangement = "divider"\nsense_resistor = "47"\n'


def warm_up() -> None:
    """Read and fit one invented sweep with the default model choice; never raises."""
    with (
        contextlib.suppress(Exception),
        warnings.catch_warnings(),
        quiet_c_output(),
        tempfile.TemporaryDirectory() as folder,
    ):
        warnings.simplefilter("ignore")
        f = np.linspace(400e3, 600e3, 201)
        z = series_rlc(f, 5.0, 100e-6, 1e-9)
        ratio = 47.0 / (47.0 + z)
        ratio += 1e-3 * np.random.default_rng(0).normal(size=(f.size, 2)) @ [1, 1j]
        path = Path(folder) / "warm-up.csv"
        table = np.column_stack([f, ratio.real, ratio.imag])
        np.savetxt(path, table, delimiter=",", header="freq (Hz),re,im", comments="")
        (Path(folder) / "fitkit-setup.toml").write_text(_SETUP, encoding="utf-8")
        fit, _ = fit_with(path, {"topology": "auto"})
        fit.to_dict()


warm_up()
