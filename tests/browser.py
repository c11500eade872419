"""Pages as a reader sees them: rendered in headless Chromium through playwright.

Skipped with a reason when Chromium or playwright is missing, except in CI (CI=true),
where that fails. playwright never downloads a browser here: it drives the system's.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

#: a laptop screen, and an A4 page's printable width at 96 px per inch (210 mm - 2 x 12 mm)
SCREEN = {"width": 1280, "height": 800}
A4_PRINT = {"width": 703, "height": 1000}


def missing(what: str) -> None:
    if os.environ.get("CI") == "true":
        pytest.fail(f"{what} is missing in CI; .ci/run installs it")
    pytest.skip(f"{what} is not installed; the pages are not rendered")


def chromium_path() -> str:
    found = shutil.which("chromium") or shutil.which("chromium-browser")
    if not found:
        missing("chromium (Debian package 'chromium')")
    return found


class Reader:
    """One Chromium, with JavaScript off unless asked: what a reader sees of a page."""

    def __init__(self, browser):
        self.browser = browser

    def look(self, page_file: Path, shots: Path, *, viewport=SCREEN, media="screen",
             javascript=False) -> dict:  # fmt: skip
        """Load the page; return its text, widths and image state; write a screenshot."""
        context = self.browser.new_context(viewport=viewport, java_script_enabled=javascript)
        try:
            page = context.new_page()
            page.emulate_media(media=media)
            page.goto(Path(page_file).resolve().as_uri())
            page.wait_for_load_state("load")
            seen = page.evaluate(
                """() => ({
                    text: document.body.innerText,
                    scroll_width: document.documentElement.scrollWidth,
                    inner_width: window.innerWidth,
                    images: document.images.length,
                    decoded: [...document.images].filter(i => i.complete && i.naturalWidth > 0)
                        .length,
                    scripts: document.querySelectorAll('script').length,
                    hacked: document.body.dataset.hacked || null,
                    headers: [...document.querySelectorAll('th')].map(t => t.innerText.trim()),
                })"""
            )
            name = f"{Path(page_file).stem}-{viewport['width']}-{media}.png"
            page.screenshot(path=str(shots / name), full_page=True)
            seen["screenshot"] = shots / name
            return seen
        finally:
            context.close()

    def print_pdf(self, page_file: Path, out: Path) -> Path:
        """Print the page on A4 as Chromium would; return the PDF written."""
        context = self.browser.new_context(java_script_enabled=False)
        try:
            page = context.new_page()
            page.goto(Path(page_file).resolve().as_uri())
            pdf = out / f"{Path(page_file).stem}-A4.pdf"
            page.pdf(path=str(pdf), format="A4", prefer_css_page_size=True)
            return pdf
        finally:
            context.close()
