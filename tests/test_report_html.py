"""The HTML report as a reader sees it: rendered in headless Chromium, then read back.

Skipped with a reason when Chromium is missing, except in CI (CI=true), where it fails.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from click.testing import CliRunner

from fitkit.cli import main

KITS = Path(__file__).resolve().parent.parent / "sample_sweeps" / "kits"
SPEC = KITS / "spec.toml"
# a file name a browser would run if it were pasted into the page unescaped
HOSTILE = '<script>kit<img src=x onerror="document.body.dataset.hacked=1">.csv'
# added to a copy of the page only: count the images the browser decoded
IMAGE_CHECK = (
    "<script>window.addEventListener('load', () => { const all = [...document.images];"
    " const p = document.createElement('p'); p.id = 'image-check';"
    " p.textContent = 'images ' + all.length + ' decoded '"
    " + all.filter(i => i.complete && i.naturalWidth > 0).length;"
    " document.body.appendChild(p); });</script>"
)


def chromium() -> str:
    found = shutil.which("chromium") or shutil.which("chromium-browser")
    if found:
        return found
    if os.environ.get("CI") == "true":
        pytest.fail("chromium is missing in CI; .ci/run installs the Debian package 'chromium'")
    pytest.skip("chromium is not installed (Debian package 'chromium'); the report is not rendered")


def render(page: Path, tmp_path: Path) -> str:
    """The DOM after Chromium has loaded the page (with the image check added)."""
    browser = chromium()
    copy = tmp_path / "rendered.html"
    copy.write_text(page.read_text(encoding="utf-8").replace("</body>", IMAGE_CHECK + "</body>"))
    done = subprocess.run(
        [
            browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}",
            "--virtual-time-budget=10000", "--dump-dom", copy.as_uri(),
        ],
        capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stderr[-2000:]
    return done.stdout


def text_of(dom: str) -> str:
    """What a reader sees: the DOM without tags, entities decoded."""
    import html

    body = re.sub(r"<script.*?</script>|<style.*?</style>", "", dom, flags=re.S)
    return html.unescape(re.sub(r"<[^>]+>", " ", body))


def images(dom: str) -> tuple[int, int]:
    m = re.search(r"images (\d+) decoded (\d+)", dom)
    assert m, "the image check did not run"
    return int(m.group(1)), int(m.group(2))


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def test_single_fit_report_shows_values_verdicts_plot_and_checksum(tmp_path):
    page = tmp_path / "kit-04.html"
    result = run("report", KITS / "kit-04.csv", "--spec", SPEC, "--out", page)
    assert result.exit_code == 0, result.output
    dom = render(page, tmp_path)
    seen = text_of(dom)
    # the sample scenario (make_kits.py): kit 04's coil sits on its upper limit, 493.5 uH
    assert re.search(r"L\s+493\.\d+ uH \+/- 0\.\d+ uH\s+undecided", seen)
    assert "pass" in seen and "ILAC-G8:09/2019" in seen
    assert "fitkit version 0.1.0" in " ".join(seen.split())
    import hashlib

    assert hashlib.sha256((KITS / "kit-04.csv").read_bytes()).hexdigest() in seen
    assert "kits/fitkit-setup.toml" in seen and "sense resistor 22 ohm" in seen
    assert "circuit model series R-L-C (" in " ".join(seen.split())  # and why it was chosen
    assert images(dom) == (1, 1)


def test_report_is_not_overwritten_without_force(tmp_path):
    page = tmp_path / "r.html"
    page.write_text("keep me")
    result = run("report", KITS / "kit-01.csv", "--out", page)
    assert result.exit_code == 2 and "--force" in result.output
    assert page.read_text() == "keep me"


def test_batch_report_escapes_file_names_and_shows_every_unit(tmp_path):
    folder = tmp_path / "kits"
    folder.mkdir()
    for name in ("kit-01.csv", "kit-07.csv", "kit-10.csv", "fitkit-setup.toml"):
        shutil.copy(KITS / name, folder / name)
    shutil.copy(KITS / "kit-02.csv", folder / HOSTILE)
    out = tmp_path / "out"
    result = run("batch", folder, "--spec", SPEC, "--out", out, "--report", "--workers", "1")
    assert result.exit_code == 0, result.output
    dom = render(out / "report.html", tmp_path)
    assert "data-hacked" not in dom  # the onerror in the file name never ran
    assert dom.count("<script") == 1  # only the image check added by this test
    seen = text_of(dom)
    assert HOSTILE in seen  # shown as text, as the file is named
    assert "not fitted" in seen and "kit-10.csv" in seen
    assert re.search(r"kit-07\.csv\s+fail", seen)
    assert "Statistics" in seen and "standard deviation" in seen
    assert images(dom) == (3, 3)  # one plot per fitted unit
