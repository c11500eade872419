"""Adversarial inputs through the command line: every case in tests/adversarial_cases.py
must end with exit status 2 and a message naming the input and the fix, never a traceback.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main
from tests.adversarial_cases import CASES

SWEEP = Path(__file__).resolve().parent.parent / "sample_sweeps/hand_wound_series/sweep.csv"


def _materialise(case, tmp_path: Path) -> list[str]:
    for name, content in case.files.items():
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
    bad = next((tmp_path / n for n in case.files if n.startswith("bad")), tmp_path / "bad.csv")
    return [a.format(S=SWEEP, tmp=tmp_path, bad=bad) for a in case.args]


def test_the_table_holds_at_least_150_distinct_cases():
    names = [case.name for case in CASES]
    assert len(names) >= 150
    assert len(set(names)) == len(names)


@pytest.mark.parametrize("case", CASES, ids=[case.name for case in CASES])
def test_case_is_refused_with_where_and_fix(case, tmp_path):
    args = _materialise(case, tmp_path)
    result = CliRunner().invoke(main, args)
    assert not isinstance(result.exception, Exception) or isinstance(
        result.exception, SystemExit
    ), f"traceback: {result.exception!r}\n{result.output}"
    assert result.exit_code == 2, result.output
    text = result.output.lower()
    assert "error" in text
    assert "traceback" not in text
    for needed in case.says:
        assert needed.lower() in text, f"{needed!r} not in:\n{result.output}"
