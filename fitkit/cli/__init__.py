"""The command line: each module holds one command that parses, calls the library, prints.

Command modules are imported when their command runs (see ``fitkit.cli.base.COMMANDS``);
:func:`load_all` imports every one, for tools that walk the commands.
"""

import importlib

from fitkit.cli.base import COMMANDS, main

__all__ = ["load_all", "main"]


def load_all():
    """Import every command module, so that ``main.commands`` holds them all."""
    for module, _ in COMMANDS.values():
        importlib.import_module(f"fitkit.cli.{module}")
    return main
