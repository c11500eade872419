"""Every command shown in the docs still gives the output the docs show.

A documented example is a ``$ fitkit ...`` line in a fenced block or an indented block
(a trailing backslash continues it); the lines after it, up to the next ``$`` line or the
end of the block, are expected output, and ``...`` skips lines. Each page's commands run
in order in a fresh folder that sees the bundled sample sweeps (``/tmp/`` in a command
means that folder), so one example may use a file an earlier one wrote. Each expected
line must appear in the real output in order, its words equal and its numbers within the
precision written.
"""

from __future__ import annotations

import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PAGES = sorted((ROOT / "docs").glob("*.md")) + [ROOT / "README.md"]
_NUMBER = re.compile(r"[-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?")


def _blocks(text: str) -> list[list[str]]:
    """Fenced blocks and indented blocks, as lists of lines (indentation removed)."""
    blocks = [b.split("\n") for b in re.findall(r"```[a-z]*\n(.*?)```", text, flags=re.S)]
    unfenced = re.sub(r"```.*?```", "", text, flags=re.S)
    for chunk in re.findall(r"((?:^(?: {4}.*|)\n)+)", unfenced, flags=re.M):
        lines = [ln[4:] for ln in chunk.split("\n")]
        blocks.append(lines)
    return blocks


def examples(page: Path) -> list[tuple[str, list[str]]]:
    """(command, expected output lines) for every ``$ fitkit`` example on a page."""
    found = []
    for lines in _blocks(page.read_text(encoding="utf-8")):
        i = 0
        while i < len(lines):
            if not lines[i].startswith("$ fitkit "):
                i += 1
                continue
            command = lines[i][2:]
            while command.endswith("\\") and i + 1 < len(lines):
                i += 1
                command = command[:-1] + " " + lines[i].strip()
            expected = []
            i += 1
            while i < len(lines) and not lines[i].startswith("$ "):
                if lines[i].strip():
                    expected.append(lines[i])
                i += 1
            found.append((command, expected))
    return found


def _matches(expected: str, actual: str) -> bool:
    if _NUMBER.sub("#", expected).strip() != _NUMBER.sub("#", actual).strip():
        return False
    for want, got in zip(_NUMBER.findall(expected), _NUMBER.findall(actual)):
        decimals = len(want.split(".")[1].split("e")[0].split("E")[0]) if "." in want else 0
        tolerance = max(2 * 10.0**-decimals, 1e-6 * abs(float(want)))
        if abs(float(want) - float(got)) > tolerance:
            return False
    return True


def _run(command: str, folder: Path) -> str:
    command = command.replace("/tmp/", f"{folder}/")
    words = shlex.split(command.split(">")[0])
    argv = [sys.executable, "-m", "fitkit", *words[1:]]
    env = {**os.environ, "COLUMNS": "100"}
    proc = subprocess.run(argv, cwd=folder, capture_output=True, text=True, env=env, timeout=300)
    if ">" in command:
        (folder / command.split(">")[1].strip()).write_text(proc.stdout, encoding="utf-8")
        return proc.stderr
    return proc.stdout + proc.stderr


@pytest.mark.parametrize("page", [p for p in PAGES if examples(p)], ids=lambda p: p.name)
def test_documented_output_still_holds(page, tmp_path):
    (tmp_path / "sample_sweeps").symlink_to(ROOT / "sample_sweeps")
    for command, expected in examples(page):
        lines = _run(command, tmp_path).splitlines()
        position = 0
        for want in expected:
            if want.strip() == "...":
                continue
            want = want.replace("/tmp/", f"{tmp_path}/")
            for i in range(position, len(lines)):
                if _matches(want, lines[i]):
                    position = i + 1
                    break
            else:
                pytest.fail(
                    f"{page.name}: documented line not in the output of {command!r}:\n{want}"
                    "\n\noutput was:\n" + "\n".join(lines)
                )


def test_the_docs_show_examples_of_every_command():
    shown = {c.split()[1] for p in PAGES for c, _ in examples(p)}
    from fitkit.cli import main

    assert set(main.commands) <= shown, sorted(set(main.commands) - shown)
