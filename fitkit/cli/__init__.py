"""The command line: each module holds one command that parses, calls the library, prints."""

from fitkit.cli import batch_cmd, drift_cmd, report_cmd  # noqa: F401
from fitkit.cli import fit_cmd, inspect_cmd  # noqa: F401  (registers the commands)
from fitkit.cli import plan_cmd  # noqa: F401
from fitkit.cli import predict_cmd  # noqa: F401
from fitkit.cli.base import main

__all__ = ["main"]
