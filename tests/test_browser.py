"""The quickstart in a real browser: JupyterLab on 127.0.0.1, headless Debian Chromium, Playwright.

Checks what only a browser can: the charts draw offline, a click on a chart mark reaches Python
and moves every panel, a label saved through the form lands in the store, hostile markup in a
document is shown as text and never runs, and no request leaves 127.0.0.1. Screenshots of the
views go to ``.artifacts/`` (git-ignored). Never downloads a browser: Chromium must be Debian's.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest
from _chromium import ARTIFACTS, chromium, require_browser
from _probes import quickstart_with_hostile_article

pytestmark = [pytest.mark.browser, pytest.mark.slow]

TOKEN = "tm-compare-browser-test"
KERNEL_IDLE = "Python 3 (ipykernel) | Idle"
LOCAL = re.compile(r"^(https?|wss?)://127\.0\.0\.1:\d+/|^blob:http://127\.0\.0\.1:\d+/|^data:")


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@contextlib.contextmanager
def jupyter_lab(root: Path, state: Path):
    """JupyterLab serving ``root`` on 127.0.0.1 with a fixed token and throwaway settings."""
    port = _free_port()
    tracker = state / "settings" / "@jupyterlab" / "notebook-extension"
    tracker.mkdir(parents=True)
    # Cells scrolled out of view stay in the page, so locators and screenshots reach them.
    (tracker / "tracker.jupyterlab-settings").write_text(json.dumps({"windowingMode": "none"}))
    news = state / "settings" / "@jupyterlab" / "apputils-extension"
    news.mkdir(parents=True)
    (news / "notification.jupyterlab-settings").write_text(json.dumps({"fetchNews": "false"}))
    for sub in ("workspaces", "runtime", "config", "ipython"):
        (state / sub).mkdir()
    cmd = [
        sys.executable,
        "-m",
        "jupyterlab",
        "--no-browser",
        "--ip=127.0.0.1",
        f"--port={port}",
        "--ServerApp.port_retries=0",
        f"--IdentityProvider.token={TOKEN}",
        f"--ServerApp.root_dir={root}",
        f"--LabServerApp.user_settings_dir={state / 'settings'}",
        f"--LabServerApp.workspaces_dir={state / 'workspaces'}",
        "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
        "--LabApp.news_url=",
    ]
    if os.geteuid() == 0:
        cmd.append("--allow-root")
    env = {
        **os.environ,
        "JUPYTER_RUNTIME_DIR": str(state / "runtime"),
        "JUPYTER_CONFIG_DIR": str(state / "config"),
        "IPYTHONDIR": str(state / "ipython"),
    }
    with open(state / "lab.log", "wb") as log:
        proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=env, cwd=root)
        base = f"http://127.0.0.1:{port}"
        try:
            deadline = time.monotonic() + 120
            while True:
                try:
                    with urllib.request.urlopen(f"{base}/api/status?token={TOKEN}", timeout=2):
                        break
                except OSError:
                    if proc.poll() is not None or time.monotonic() > deadline:
                        pytest.fail(
                            "JupyterLab did not start:\n" + (state / "lab.log").read_text()[-3000:]
                        )
                    time.sleep(0.5)
            yield base
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()


def run_all_cells(page, timeout_s: float = 420) -> None:
    """Run every cell from the Run menu; wait until each cell has run and the kernel idles."""
    page.locator(".jp-Notebook").first.click()
    page.locator(".lm-MenuBar-itemLabel", has_text=re.compile(r"^Run$")).first.click()
    page.locator(".lm-Menu-itemLabel", has_text=re.compile(r"^Run All Cells$")).first.click()
    deadline = time.monotonic() + timeout_s
    prompts: list[str] = []
    while time.monotonic() < deadline:
        prompts = [
            p.strip() for p in page.locator(".jp-CodeCell .jp-InputPrompt").all_inner_texts()
        ]
        if (
            prompts
            and all(re.fullmatch(r"\[\d+\]:", p) for p in prompts)
            and page.get_by_text(KERNEL_IDLE).count()
        ):
            return
        errors = page.locator(
            ".jp-OutputArea-output[data-mime-type='application/vnd.jupyter.stderr']"
        )
        if any("Error" in text for text in errors.all_inner_texts()):
            pytest.fail(
                "A cell failed in the browser:\n" + "\n".join(errors.all_inner_texts())[-3000:]
            )
        time.sleep(0.5)
    page.screenshot(path=str(ARTIFACTS / "browser-timeout.png"))
    pytest.fail(f"The notebook did not finish running; prompts: {prompts}")


def _screenshot(page, element, name: str) -> None:
    """Screenshot one view whole: JupyterLab scrolls inside its own panel, so the page is made
    tall enough for the view first (a full-page shot would miss what is scrolled away)."""
    height = int(element.evaluate("e => e.getBoundingClientRect().height"))
    page.set_viewport_size({"width": 1500, "height": max(1100, height + 400)})
    element.scroll_into_view_if_needed()
    element.screenshot(path=str(ARTIFACTS / name))
    page.set_viewport_size({"width": 1500, "height": 1100})


def _selected_topic(view) -> int:
    text = view.locator(".tmc-selected").inner_text()
    return int(re.search(r"Reading topic (\d+)", text).group(1))


def test_quickstart_in_jupyterlab(tmp_path):
    require_browser()  # before the slow set-up, so a missing browser skips at once

    from tm_compare.labels.store import LabelStore

    root = tmp_path / "lab"
    root.mkdir()
    quickstart_with_hostile_article(root / "quickstart.ipynb")  # the tutorial plus a probe
    ARTIFACTS.mkdir(exist_ok=True)
    requests: list[str] = []
    dialogs: list[str] = []
    with jupyter_lab(root, tmp_path / "state") as base, chromium() as browser:
        page = browser.new_page(viewport={"width": 1500, "height": 1100})
        page.on("request", lambda r: requests.append(r.url))
        page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
        page.goto(f"{base}/lab/tree/quickstart.ipynb?reset&token={TOKEN}")
        # The notebook's own indicator reads idle before the kernel exists: wait for the
        # status bar's kernel item instead, or "Run All" silently does nothing.
        page.get_by_text(KERNEL_IDLE).first.wait_for(timeout=180_000)
        run_all_cells(page)

        sweep_view = page.locator(".tmc-sweep-view").first
        view = page.locator(".tmc-topic-view").first
        view.wait_for(timeout=60_000)
        # Charts are drawn (offline SVG) in both views.
        sweep_view.locator(".vega-embed svg").first.wait_for(timeout=60_000)
        assert view.locator(".vega-embed svg").count() >= 3
        _screenshot(page, sweep_view, "sweep-view.png")

        # The hostile article is on show as text; nothing of it ran.
        hostile = view.locator(".tmc-doc", has_text="<script>alert('title')</script>")
        hostile.first.wait_for(timeout=30_000)
        assert "<img src=x onerror=" in hostile.first.inner_text()
        assert view.locator("script").count() == 0
        assert view.locator("img[src='x']").count() == 0
        _screenshot(page, view, "topic-view-hostile.png")

        # A click on another topic's mark in the sources chart moves every panel.
        before = _selected_topic(view)
        docs_before = view.locator(".tmc-doc").all_inner_texts()
        terms_before = view.locator(".tmc-terms [aria-label*='term: ']").evaluate_all(
            "els => els.map(e => e.getAttribute('aria-label'))"
        )
        marks = view.locator(".tmc-sources path[aria-label*='name: ']")
        labels = marks.evaluate_all("els => els.map(e => e.getAttribute('aria-label'))")
        target = next(
            i
            for i, a in enumerate(labels)
            if int(re.search(r"name: (\d+) ·", a).group(1)) != before
        )
        wanted = int(re.search(r"name: (\d+) ·", labels[target]).group(1))
        marks.nth(target).click(force=True)
        page.wait_for_function(
            "([n]) => (document.querySelector('.tmc-topic-view .tmc-selected') || {}).innerText"
            "?.includes('Reading topic ' + n + ' ')",
            arg=[wanted],
            timeout=30_000,
        )
        page.wait_for_timeout(500)
        assert view.locator(".tmc-doc").all_inner_texts() != docs_before
        terms_after = view.locator(".tmc-terms [aria-label*='term: ']").evaluate_all(
            "els => els.map(e => e.getAttribute('aria-label'))"
        )
        assert terms_after and terms_after != terms_before

        # A label saved through the form reaches the store.
        form = view.locator(".tmc-labels")
        name = f"harbour works {int(time.time())}"
        form.locator(".widget-text:has(label:text-is('Name')) input").fill(name)
        form.locator(".widget-textarea textarea").fill("saved from the browser test")
        form.locator("button", has_text="Save label").click()
        form.get_by_text("Saved as version").wait_for(timeout=30_000)
        _screenshot(page, view, "topic-view.png")

    store = LabelStore(root / "quickstart-project")
    saved = store.history()
    assert (
        (saved["name"] == name) & (saved["topic"] == wanted) & (saved["analyst"] == "analyst_a")
    ).any()
    assert dialogs == []  # no alert() from the hostile markup ever ran
    foreign = [u for u in requests if not LOCAL.match(u)]
    assert foreign == []
