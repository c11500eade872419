"""Fixtures shared by the test modules."""

from __future__ import annotations

import pytest

from tests.browser import Reader, chromium_path, missing


@pytest.fixture(scope="module")
def reader():
    path = chromium_path()
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        missing("the playwright python package (pip install '.[test]')")
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=path, args=["--no-sandbox"])
        try:
            yield Reader(browser)
        finally:
            browser.close()
