"""The command line: each module holds one command that parses, calls the library, prints."""

from fitkit.cli.base import main

__all__ = ["main"]
