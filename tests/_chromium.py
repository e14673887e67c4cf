"""Headless Debian Chromium for browser tests (never a browser downloaded by a test tool)."""

from __future__ import annotations

import contextlib
import importlib.util
import os
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
ARTIFACTS = REPO / ".artifacts"
CHROMIUM = Path("/usr/bin/chromium")
# Without the background-networking flags Chromium tries to reach outside hosts at start-up.
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]


def require_browser() -> None:
    """Skip when Chromium or Playwright is missing; fail instead in CI (CI=true)."""
    missing = [
        what
        for what, ok in (
            ("Debian's chromium", CHROMIUM.exists()),
            ("playwright", importlib.util.find_spec("playwright") is not None),
        )
        if not ok
    ]
    if missing:
        reason = f"{' and '.join(missing)} not installed (apt-get install -y chromium; pip install playwright)"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"Browser tests must run in CI but {reason}.")
        pytest.skip(reason)


@contextlib.contextmanager
def chromium():
    """A launched headless Chromium (Playwright ``Browser``), closed afterwards."""
    require_browser()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS)
        try:
            yield browser
        finally:
            browser.close()
