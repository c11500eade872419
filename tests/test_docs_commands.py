"""Every command shown in the docs still gives the output the docs show.

A documented example is a fenced block whose first line is ``$ fitkit ...``; the lines
after it are expected output. ``...`` skips lines. Each expected line must appear in the
real output in order, its words equal and its numbers within the precision written.
"""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main

ROOT = Path(__file__).resolve().parent.parent
DOCS = sorted((ROOT / "docs").glob("*.md")) + [ROOT / "README.md"]
_NUMBER = re.compile(r"[-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?")


def _examples():
    for page in DOCS:
        blocks = re.findall(r"```[a-z]*\n(\$ fitkit .*?)```", page.read_text(), flags=re.S)
        for block in blocks:
            command, *expected = block.rstrip("\n").split("\n")
            yield pytest.param(command[2:], expected, id=f"{page.name}: {command[2:60]}")


def _matches(expected: str, actual: str) -> bool:
    if _NUMBER.sub("#", expected).strip() != _NUMBER.sub("#", actual).strip():
        return False
    for want, got in zip(_NUMBER.findall(expected), _NUMBER.findall(actual)):
        decimals = len(want.split(".")[1].split("e")[0].split("E")[0]) if "." in want else 0
        tolerance = max(2 * 10.0**-decimals, 1e-6 * abs(float(want)))
        if abs(float(want) - float(got)) > tolerance:
            return False
    return True


@pytest.mark.parametrize("command, expected", list(_examples()))
def test_documented_output_still_holds(command, expected, monkeypatch):
    monkeypatch.chdir(ROOT)
    args = shlex.split(command)[1:]
    result = CliRunner().invoke(main, args)
    lines = result.output.splitlines()
    position = 0
    for want in expected:
        if want.strip() in ("...", ""):
            continue
        for i in range(position, len(lines)):
            if _matches(want, lines[i]):
                position = i + 1
                break
        else:
            pytest.fail(f"documented line not in the output of {command!r}:\n{want}\n\n"
                        f"output was:\n{result.output}")


def test_there_are_documented_examples():
    assert len(list(_examples())) >= 4
