"""fitkit: fit R, L and C with honest uncertainties to bench sweeps of tuned circuits.

The public API: read a sweep, describe the bench, fit, and use the result.

>>> from fitkit import fit_file
>>> fit, setup_used = fit_file("sample_sweeps/hand_wound_series/sweep.csv")  # doctest: +SKIP
>>> print(fit["L"].text())  # doctest: +SKIP
220.080 uH +/- 0.058 uH
"""

import importlib

from fitkit.version import __version__

#: public name -> the module that defines it; imported on first use (PEP 562), so that
#: ``import fitkit`` and the command line's start-up stay quick
_WHERE = {
    "CircuitFit": "fitkit.result",
    "FitError": "fitkit.errors",
    "FitkitError": "fitkit.errors",
    "InputError": "fitkit.errors",
    "PredictionError": "fitkit.errors",
    "Quantity": "fitkit.result",
    "Setup": "fitkit.setups",
    "SetupError": "fitkit.errors",
    "Sweep": "fitkit.sweep",
    "fit_file": "fitkit.workflow",
    "fit_sweep": "fitkit.fitting",
    "format_quantity": "fitkit.units",
    "load_fit": "fitkit.result",
    "parse_quantity": "fitkit.units",
    "read_sweep": "fitkit.readers",
}


def __getattr__(name: str):
    if name in _WHERE:
        return getattr(importlib.import_module(_WHERE[name]), name)
    raise AttributeError(f"module 'fitkit' has no attribute {name!r}")


def __dir__() -> list:
    return sorted(__all__)


__all__ = [
    "CircuitFit",
    "FitError",
    "FitkitError",
    "InputError",
    "PredictionError",
    "Quantity",
    "Setup",
    "SetupError",
    "Sweep",
    "__version__",
    "fit_file",
    "fit_sweep",
    "format_quantity",
    "load_fit",
    "parse_quantity",
    "read_sweep",
]
