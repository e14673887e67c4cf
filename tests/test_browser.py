"""The views in a real browser: JupyterLab on 127.0.0.1, headless Debian Chromium, Playwright.

One JupyterLab and one Chromium serve the whole module. Checks what only a browser can: the
charts draw offline; a view opened on topic 7 draws topic 7 in every panel from the first draw
(heading, both charts' band, the term map and list); a click on a chart mark or a found topic
reaches Python and moves every panel; find-by-word and a download work from the page; no chart
text leaves its chart at notebook width; a label saved through the form lands in the store;
hostile markup in a document is shown as text and never runs; and no request leaves 127.0.0.1.
Screenshots go to ``.artifacts/`` (git-ignored). Never downloads a browser: Chromium must be
Debian's.
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
from _svg_fit import TEXT_OUTSIDE

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


@pytest.fixture(scope="module")
def lab(tmp_path_factory):
    """(base URL, served folder, browser): one JupyterLab and one Chromium for the module."""
    require_browser()  # before the slow set-up, so a missing browser skips at once
    root = tmp_path_factory.mktemp("lab")
    state = tmp_path_factory.mktemp("state")
    ARTIFACTS.mkdir(exist_ok=True)
    with jupyter_lab(root, state) as base, chromium() as browser:
        yield base, root, browser


def open_notebook(lab, name: str, width: int = 1500):
    """A new page on notebook ``name`` of the served folder, its kernel idle; the page records
    every request URL (``page.requests``), every dialog (``page.dialogs``) and every WebSocket
    message it receives (``page.received``)."""
    base, _, browser = lab
    page = browser.new_page(viewport={"width": width, "height": 1100})
    page.requests, page.dialogs, page.received = [], [], []
    page.on("request", lambda r: page.requests.append(r.url))
    page.on("websocket", lambda ws: ws.on("framereceived", lambda m: page.received.append(m)))
    page.on("dialog", lambda d: (page.dialogs.append(d.message), d.dismiss()))
    page.goto(f"{base}/lab/tree/{name}?reset&token={TOKEN}")
    # The notebook's own indicator reads idle before the kernel exists: wait for the
    # status bar's kernel item instead, or "Run All" silently does nothing.
    page.get_by_text(KERNEL_IDLE).first.wait_for(timeout=180_000)
    return page


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


def _labels(locator) -> list[str]:
    return locator.evaluate_all("els => els.map(e => e.getAttribute('aria-label'))")


def _wait_for_topic(page, view_index: int, topic: int) -> None:
    page.wait_for_function(
        "([i, n]) => (document.querySelectorAll('.tmc-topic-view')[i]"
        "?.querySelector('.tmc-selected') || {}).innerText?.includes('Reading topic ' + n + ' ')",
        arg=[view_index, topic],
        timeout=30_000,
    )


def test_quickstart_in_jupyterlab(lab):
    from tm_compare.labels.store import LabelStore

    _, root, _ = lab
    quickstart_with_hostile_article(root / "quickstart.ipynb")  # the tutorial plus a probe
    page = open_notebook(lab, "quickstart.ipynb")
    run_all_cells(page)

    sweep_view = page.locator(".tmc-sweep-view").first
    view = page.locator(".tmc-topic-view").first
    view.wait_for(timeout=60_000)
    # Charts are drawn (offline SVG) in both views.
    sweep_view.locator(".vega-embed svg").first.wait_for(timeout=60_000)
    assert view.locator(".vega-embed svg").count() >= 3
    _screenshot(page, sweep_view, "sweep-view.png")

    # A click on another topic's mark in the sources chart moves every panel.
    before = _selected_topic(view)
    docs_before = view.locator(".tmc-doc").all_inner_texts()
    terms_before = _labels(view.locator(".tmc-terms [aria-label*='term: ']"))
    marks = view.locator(".tmc-sources path[aria-label*='name: ']")
    labels = _labels(marks)
    target = next(
        i for i, a in enumerate(labels) if int(re.search(r"name: (\d+) ·", a).group(1)) != before
    )
    wanted = int(re.search(r"name: (\d+) ·", labels[target]).group(1))
    marks.nth(target).click(force=True)
    _wait_for_topic(page, 0, wanted)
    page.wait_for_timeout(500)
    assert view.locator(".tmc-doc").all_inner_texts() != docs_before
    terms_after = _labels(view.locator(".tmc-terms [aria-label*='term: ']"))
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
    assert page.dialogs == []
    assert [u for u in page.requests if not LOCAL.match(u)] == []
    page.close()


# A planted model: topic t owns words w{t}0..w{t}9 (the ground truth the page is checked
# against), two sources, and one hostile document whose markup must never run.
PLANTED = """
import numpy as np, pandas as pd
from tm_compare import TopicView
from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus

K, PER = 8, 10
rng = np.random.default_rng(3)
n = 320
sources = np.array(["shared"] * 160 + ["visited"] * 160)
dominant = rng.integers(0, K, n)
doc_topic = np.full((n, K), 0.02)
doc_topic[np.arange(n), dominant] = 1 - 0.02 * (K - 1)
vocab = [f"w{t}{i}" for t in range(K) for i in range(PER)]
topic_term = np.full((K, len(vocab)), 0.001)
for t in range(K):
    topic_term[t, t * PER:(t + 1) * PER] = np.linspace(0.2, 0.05, PER)
topic_term /= topic_term.sum(axis=1, keepdims=True)
tokens = [list(rng.choice(vocab, 30, p=doc_topic[d] @ topic_term)) for d in range(n)]
titles = [f"Article {d} on topic {dominant[d]}" for d in range(n)]
hostile = int(np.flatnonzero(dominant == 7)[0])
titles[hostile] = "Tide <script>alert('title')</script> report"
texts = [" ".join(t) for t in tokens]
texts[hostile] = "w70 w71 <img src=x onerror=alert('x')> w72 " + texts[hostile]
meta = pd.DataFrame({
    "id": [f"d{d:03d}" for d in range(n)], "source": sources, "weight": 1.0,
    "group": [f"reader_{d % 10}" for d in range(n)], "url": None, "title": titles,
    "date": pd.Timestamp("2024-03-01"), "text": texts,
})
prepared = PreparedCorpus.from_texts(tokens, meta, vocab=vocab)
fit = Fit.from_arrays(prepared, topic_term, doc_topic, doc_dirichlet=doc_topic * 50)
"""


# A view moved before it is drawn: counting each article once, then topic 5. Its wording chart
# was built on topic 2 and swapped its rows; the page must draw topic 5's. The expected bars come
# from the plain function: a term leans to its row's source when z > 0, else to the other.
MOVED = """
from tm_compare.compare.terms import source_wording
moved = TopicView(fit, prepared, topic=2, n_boot=50, n_docs=1)
moved.sources_panel.weighting.value = "unique"
moved.topic = 5
w = source_wording(fit, prepared, 5, against="each", weighting="unique")
print("WORDING=" + ",".join(
    sorted(f"{t}|{s if z > 0 else o}" for t, s, o, z in zip(w.term, w.source, w.other, w.z))))
moved
"""


def _planted_notebook(path: Path) -> None:
    cells = [
        PLANTED,
        'view = TopicView(fit, prepared, topic=7, n_boot=50, n_docs=3, downloads="downloads")\n'
        "view",
        "reference = TopicView(fit, prepared, topic=2, n_boot=50, n_docs=1)\nreference",
        MOVED,
    ]
    notebook = {
        "cells": [
            {
                "cell_type": "code",
                "execution_count": None,
                "metadata": {},
                "outputs": [],
                "source": source,
            }
            for source in cells
        ],
        "metadata": {
            "kernelspec": {"display_name": "Python 3", "language": "python", "name": "python3"}
        },
        "nbformat": 4,
        "nbformat_minor": 5,
    }
    path.write_text(json.dumps(notebook))


def _band_topics(view) -> list[int]:
    # the pale band behind the topic in focus, one per panel of the sources chart
    bands = _labels(view.locator(".tmc-sources [aria-label^='selected topic ']"))
    return [int(re.match(r"selected topic (\d+) ·", b).group(1)) for b in bands]


def _map_terms(view) -> list[str]:
    return [
        t.split(" ", 1)[1]
        for t in view.locator(".tmc-terms svg text").evaluate_all(
            "els => els.map(e => e.textContent)"
        )
        if re.fullmatch(r"\d+ w\d+", t)
    ]


def test_views_right_on_first_draw_find_download_and_fit(lab):
    _, root, _ = lab
    _planted_notebook(root / "planted.ipynb")
    # about the width a notebook gets on a laptop screen
    page = open_notebook(lab, "planted.ipynb", width=1100)
    run_all_cells(page)
    view, reference = page.locator(".tmc-topic-view").nth(0), page.locator(".tmc-topic-view").nth(1)
    reference.locator(".tmc-terms svg").first.wait_for(timeout=60_000)
    view.locator(".tmc-terms svg").first.wait_for(timeout=60_000)
    page.wait_for_timeout(1500)  # let any first-draw report reach the kernel and come back

    # 1. First draw: heading, both charts' band, the term map and the term list all on topic 7.
    assert _selected_topic(view) == 7
    assert "Reading topic 7 · w70 w71 w72" in view.locator(".tmc-selected").inner_text()
    assert _band_topics(view) == [7, 7]
    planted_7 = [f"w7{i}" for i in range(10)]
    assert _map_terms(view) and set(_map_terms(view)) <= set(planted_7)
    assert view.locator(".tmc-term-list .tmc-term").all_inner_texts() == planted_7
    # the reference view keeps its own topic
    assert _selected_topic(reference) == 2 and _band_topics(reference) == [2, 2]
    assert set(_map_terms(reference)) <= {f"w2{i}" for i in range(10)}
    # the moved view draws what Python moved it to, rows swapped in place included
    moved = page.locator(".tmc-topic-view").nth(2)
    moved.locator(".tmc-wording [aria-label*='; term: ']").first.wait_for(timeout=60_000)
    assert _selected_topic(moved) == 5 and _band_topics(moved) == [5, 5]
    bars = _labels(moved.locator(".tmc-wording [aria-label*='; term: ']"))
    term, leans = re.compile(r"term: ([^;]+);"), re.compile(r"more in: (\w+)")
    drawn = sorted(f"{term.search(b).group(1)}|{leans.search(b).group(1)}" for b in bars)
    printed = "\n".join(page.locator(".jp-OutputArea-output").all_inner_texts())
    assert drawn == re.search(r"WORDING=(\S+)", printed).group(1).split(",")
    assert "Counting each article once" in moved.locator(".tmc-sources").inner_text()
    # the term panel: no slider, rankings by our names, the weight a number under more options
    # (the time panel's date range is a slider of its own; the term panel must have none)
    assert view.locator(".tmc-terms-panel").count() == 1
    assert view.locator(".tmc-terms-panel .widget-slider").count() == 0
    assert "lambda" not in view.inner_text()
    _screenshot(page, view, "topic-view-planted.png")

    # 2. Readable at notebook width: no chart text outside its chart, no ticks run together.
    for i, svg in enumerate(page.locator(".tmc-topic-view .vega-embed svg").all()):
        assert svg.evaluate(TEXT_OUTSIDE) == [], f"chart {i}"

    # 3. The hostile document is on show as text; nothing of it ran.
    hostile = view.locator(".tmc-doc", has_text="<script>alert('title')</script>")
    hostile.first.wait_for(timeout=30_000)
    assert "<img src=x onerror=" in hostile.first.inner_text()
    assert view.locator("script").count() == 0 and view.locator("img[src='x']").count() == 0

    # 4. Find by word: w35 is the 6th term of planted topic 3; a click on it moves every panel.
    box = view.locator(".tmc-find-input input")
    box.fill("w35")
    box.press("Enter")
    found = view.locator(".tmc-find-results tr", has_text="3 · w30 w31 w32")
    found.first.wait_for(timeout=30_000)
    assert "6" in found.first.inner_text().split()
    before = len(page.received)
    found.first.click()
    _wait_for_topic(page, 0, 3)
    page.wait_for_function(
        "() => Array.from(document.querySelectorAll('.tmc-topic-view')[0]"
        ".querySelectorAll('.tmc-sources [aria-label^=\"selected topic \"]'))"
        ".every(e => e.getAttribute('aria-label').startsWith('selected topic 3 '))",
        timeout=30_000,
    )
    page.wait_for_timeout(500)
    assert _band_topics(view) == [3, 3]
    assert set(_map_terms(view)) <= {f"w3{i}" for i in range(10)}
    assert view.locator(".tmc-term-list .tmc-term").all_inner_texts()[5] == "w35"
    # The switch reached the page as one message: the heading travelled with every panel's
    # changes in the courier's burst (views/_burst.py), not in a message of its own.
    texts = [m if isinstance(m, str) else m.decode("utf-8", "replace") for m in page.received]
    carrying = [m for m in texts[before:] if "Reading topic" in m]
    assert len(carrying) == 1 and "tmc-burst" in carrying[0] and "tmc-doc" in carrying[0]

    # 5. Another ranking from the list; its weight is a plain number under "more options".
    assert not view.locator(".tmc-weight input").is_visible()
    view.locator(".tmc-ranking select").select_option(label="distinctive (FREX)")
    view.locator(".tmc-more-options").click()
    weight = view.locator(".tmc-weight input")
    weight.wait_for(state="visible", timeout=30_000)
    assert float(weight.input_value()) == 0.5
    weight.fill("0.8")
    weight.press("Enter")
    page.wait_for_function(
        "() => document.querySelector('.tmc-topic-view .tmc-term-list')"
        ".innerText.includes('ranked distinctive (FREX)')",
        timeout=30_000,
    )

    # 6. A download: the term map as PNG lands in the chosen folder, its path on the page.
    view.locator(".tmc-downloads-term-map .tmc-download-png").click()
    saved = view.locator(".tmc-downloads-term-map .tmc-saved-path")
    saved.wait_for(timeout=60_000)
    path = Path(saved.inner_text())
    assert path == root / "downloads" / "term-map_k8-seed0_topic3_frexw0.8.png"
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    assert page.dialogs == []  # no alert() from the hostile markup ever ran
    assert [u for u in page.requests if not LOCAL.match(u)] == []
    page.close()
