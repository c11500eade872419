"""The Python examples of docs/python.md run and print what the page shows."""

from __future__ import annotations

import doctest
import os
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_python_page_examples_run_as_shown():
    here = os.getcwd()
    os.chdir(ROOT)  # the page's paths are relative to the project folder
    try:
        result = doctest.testfile(
            str(ROOT / "docs" / "python.md"),
            module_relative=False,
            optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
        )
    finally:
        os.chdir(here)
    assert result.attempted >= 10 and result.failed == 0
