"""Every command has help text and a place in the generated reference, kept current."""

import importlib.util
from pathlib import Path

from click.testing import CliRunner

from fitkit.cli import main

ROOT = Path(__file__).resolve().parent.parent


def _reference_module():
    spec = importlib.util.spec_from_file_location("make_commands", ROOT / "docs/make_commands.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_reference_is_current():
    written = (ROOT / "docs" / "commands.md").read_text(encoding="utf-8")
    assert written == _reference_module().reference_text(), (
        "docs/commands.md is stale: run 'python docs/make_commands.py'"
    )


def test_every_command_has_help_and_a_section():
    written = (ROOT / "docs" / "commands.md").read_text(encoding="utf-8")
    for name, command in main.commands.items():
        assert command.help and len(command.help) > 40, name
        assert f"## fitkit {name}\n" in written, name
        assert CliRunner().invoke(main, [name, "--help"]).exit_code == 0
