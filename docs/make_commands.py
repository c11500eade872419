"""Write docs/commands.md from the command line's own help texts.

Run from the repository root: ``python docs/make_commands.py``. A test checks that the
file is up to date, so the reference cannot drift from the code.
"""

from __future__ import annotations

import sys
from pathlib import Path

import click

ROOT = Path(__file__).resolve().parent.parent
TARGET = ROOT / "docs" / "commands.md"


def reference_text() -> str:
    """The command reference, one section per command, from ``--help``."""
    from fitkit.cli import load_all

    main = load_all()

    parts = [
        "# Command reference",
        "",
        "Generated from the commands' own help by `python docs/make_commands.py`; do not",
        "edit by hand.",
        "",
    ]
    top = main.make_context("fitkit", ["--help"], resilient_parsing=True)
    for name in sorted(main.commands):
        command = main.commands[name]
        # a child of the group's context, as when run: the same help option names
        with click.Context(command, info_name=name, parent=top, terminal_width=88) as ctx:
            text = command.get_help(ctx)
        parts += [f"## fitkit {name}", "", "```", text, "```", ""]
    return "\n".join(parts)


def main() -> None:
    TARGET.write_text(reference_text(), encoding="utf-8")
    print(f"wrote {TARGET.relative_to(ROOT)}")


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    main()
