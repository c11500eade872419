"""fitkit: fit R, L and C with honest uncertainties to bench sweeps of tuned circuits.

The public API: read a sweep, describe the bench, fit, and use the result.

>>> from fitkit import fit_file
>>> fit, setup_used = fit_file("sample_sweeps/hand_wound_series/sweep.csv")  # doctest: +SKIP
>>> print(fit["L"].text())  # doctest: +SKIP
220.080 uH +/- 0.058 uH
"""

__version__ = "0.1.0"

from fitkit.errors import FitError, FitkitError, InputError, PredictionError, SetupError
from fitkit.fitting import fit_sweep
from fitkit.readers import read_sweep
from fitkit.result import CircuitFit, Quantity, load_fit
from fitkit.setups import Setup
from fitkit.sweep import Sweep
from fitkit.units import format_quantity, parse_quantity
from fitkit.workflow import fit_file

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
