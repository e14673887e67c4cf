"""``tm-compare demo`` on a small corpus, then its report in headless Debian Chromium.

The report must open from a file with no network request (every URL is ``file:`` or ``data:``)
and no console error, and every chart must be readable: each chart image is drawn on its own in
the same browser and no text element (title, subtitle, label, tick) may reach outside the chart's
SVG box, nor two tick labels of one axis overlap (measured with bounding boxes). A full-page
screenshot goes to ``.artifacts/`` (git-ignored). Never downloads a browser: Chromium must be
Debian's (``apt-get install -y chromium``).
"""

from __future__ import annotations

import base64
import subprocess
import sys

import pytest
from _chromium import ARTIFACTS, chromium, require_browser
from _svg_fit import TEXT_OUTSIDE

pytestmark = [pytest.mark.browser, pytest.mark.slow]


def test_demo_report_opens_offline_without_errors(tmp_path):
    require_browser()  # before the slow set-up, so a missing browser skips at once

    project = tmp_path / "demo"
    command = [
        sys.executable,
        "-m",
        "tm_compare",
        "demo",
        "--project",
        str(project),
        "--docs",
        "400",
        "--k",
        "4,6",
        "--seeds",
        "2",
        "--passes",
        "2",
        "--n-boot",
        "100",
        "--no-progress",
    ]
    done = subprocess.run(command, capture_output=True, text=True, timeout=900)
    assert done.returncode == 0, done.stderr[-2000:]
    report = project / "report" / "report.html"
    assert str(report.resolve()) in done.stdout
    assert "Recommended k =" in done.stdout and "Influence check" in done.stdout

    requests, problems = [], []
    with chromium() as browser:
        page = browser.new_page(viewport={"width": 1200, "height": 900})
        page.on("request", lambda r: requests.append(r.url))
        page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
        page.on("pageerror", lambda e: problems.append(str(e)))
        page.goto(report.resolve().as_uri(), wait_until="load")
        images = page.eval_on_selector_all(
            "img", "els => els.map(e => [e.complete, e.naturalWidth])"
        )
        headings = page.eval_on_selector_all("h2", "els => els.map(e => e.textContent)")
        sources = page.eval_on_selector_all("img", "els => els.map(e => e.src)")
        ARTIFACTS.mkdir(exist_ok=True)
        page.screenshot(path=str(ARTIFACTS / "report.png"), full_page=True)
        page.screenshot(path=str(ARTIFACTS / "report-top.png"))
        # Each chart on its own page, as the browser draws it: does every text fit?
        misfits = {}
        prefix = "data:image/svg+xml;base64,"
        for n, src in enumerate(sources):
            assert src.startswith(prefix)
            svg = base64.b64decode(src[len(prefix) :]).decode("utf-8")
            page.set_content(f'<html><body style="margin:0">{svg}</body></html>')
            found = page.locator("svg").first.evaluate(TEXT_OUTSIDE)
            if found:
                misfits[n] = found
        assert len(sources) >= 3  # the sweep, the sources, the term maps
    assert misfits == {}
    assert requests and all(u.startswith(("file:", "data:")) for u in requests), requests
    assert problems == []
    # Every chart drew (an SVG that failed to decode has no natural width).
    assert images and all(ok and width > 0 for ok, width in images), images
    # The sections in the order the issue asks for.
    words = [
        "documents",
        "number of topics",
        "topics",
        "Sources",
        "Documents",
        "Labels",
        "Reproducing",
        "Cautions",
    ]
    # Optional sections (change over time, prevalence models) are unnumbered and sit after the
    # comparison of sources; the demo has dates, so its report shows the change over time.
    extra = [h for h in headings if not h[:1].isdigit()]
    assert extra == ["Change over time"]
    assert headings.index("Change over time") == 4
    headings = [h for h in headings if h[:1].isdigit()]
    assert len(headings) == len(words)
    assert all(
        h.startswith(str(i)) and w in h
        for i, (h, w) in enumerate(zip(headings, words, strict=True), 1)
    )
