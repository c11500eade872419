"""fitkit: fit R, L and C with honest uncertainties to bench sweeps of tuned circuits."""

__version__ = "0.1.0"
