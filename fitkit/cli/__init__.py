"""The command line: each module holds one command that parses, calls the library, prints."""

from fitkit.cli import (  # noqa: F401  (importing a module registers its command)
    acquire_cmd,
    batch_cmd,
    drift_cmd,
    fit_cmd,
    inspect_cmd,
    plan_cmd,
    predict_cmd,
    report_cmd,
    show_cmd,
    simbench_cmd,
)
from fitkit.cli.base import main

__all__ = ["main"]
