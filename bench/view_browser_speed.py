"""Topic switch in a real browser: from a click on a chart mark to the repainted view.

JupyterLab on 127.0.0.1 and headless Debian Chromium (Playwright; never a downloaded
browser) run a notebook that builds the synthetic model of ``bench/view_speed.py``
(``--docs`` x ``--topics``) and shows a ``TopicView``. The script then clicks marks of
the sources chart, one new topic at a time, and times in the page, with ``performance.now()``:
from the press of the mouse until every panel shows the new topic (the heading, the band of
both sources panels, the term map's first term, the term list, the wording chart's bars and
the document cards; the last two are checked as changed and drawn, so the same test serves
any version of the view), plus two animation frames (the browser has painted). The first
``TopicView`` is timed inside the kernel (built and handed to ``display``) and in the page
(until its charts are drawn).

This tree's view prepares every topic while the kernel idles (``TopicView.prepare``); the clicks
come after both views are drawn, so they meet prepared topics, as a reader who looks at the view
for a few seconds does. ``--cold`` switches that off: each click then computes its topic. Per
click the script also reads, in the page, the renderer main thread's CPU time, script and
layout time (Chromium's performance counters, diffed around the click), how many widget messages
arrived and when the last one and the kernel's idle did; it prints their medians per side.

Baseline: the same notebook, clicks and checks on the views of git commit ``--baseline``
(default: the last commit before the switch updated charts in place), unpacked with
``git archive`` and imported in a second kernel of the same JupyterLab and browser. Both sides
run in one run of this script, the clicks alternating between the two views so that both meet
the same load; the ratio is baseline / this tree, on the medians. The first views are built one
after the other (this tree first), so their ratio is only as good as the load was steady.

    python bench/view_browser_speed.py --docs 200000 --topics 50 --clicks 10
"""

from __future__ import annotations

import argparse
import json
import re
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(REPO / "tests"))
sys.path.insert(0, str(HERE))

#: The views before topic switches swapped chart data in place (TopicView of 2 Dec 2026).
BASELINE = "cfdf414"
MARKS = ".tmc-sources path[aria-label*='name: ']"

# Runs in every page before its scripts: notes each kernel message the page receives (time,
# kind), so a click's breakdown can say how many came and when the kernel went idle.
HOOK = r"""
(() => {
  const Socket = window.WebSocket, text = new TextDecoder();
  window.__tmcMessages = [];
  window.WebSocket = class extends Socket {
    constructor(...args) {
      super(...args);
      this.addEventListener('message', (event) => {
        const t = performance.now();
        const raw = typeof event.data === 'string' ? event.data : text.decode(event.data);
        const kind = (raw.match(/"msg_type":\s*"([^"]+)"/) || [])[1];
        const state = (raw.match(/"execution_state":\s*"([^"]+)"/) || [])[1];
        window.__tmcMessages.push([t, kind === 'status' ? state : kind]);
      });
    }
  };
})();
"""
#: Renderer main-thread counters (CDP Performance.getMetrics, seconds) diffed around a click.
METRICS = ("ThreadTime", "ScriptDuration", "LayoutDuration", "RecalcStyleDuration")

# Runs in the page before the click: what the wording chart and the documents show now, and
# the time of the next mouse press (capture phase).
ARM = """
() => {
  const view = document.querySelector('.tmc-topic-view');
  const texts = (sel) => Array.from(view.querySelectorAll(sel))
      .map(e => e.getAttribute('aria-label') || e.innerText).join('|');
  window.__tmcBefore = {wording: texts('.tmc-wording [aria-label]'), docs: texts('.tmc-doc')};
  window.__tmcClick = null;
  window.__tmcMessages.length = 0;
  document.addEventListener('mousedown', () => { window.__tmcClick = performance.now(); },
                            {capture: true, once: true});
}
"""
# Runs in the page after the click: resolve with ms from the press until every panel shows the
# wanted topic, plus two animation frames (painted).
WAIT = """
async ([wanted]) => {
  const view = document.querySelector('.tmc-topic-view');
  const texts = (sel) => Array.from(view.querySelectorAll(sel))
      .map(e => e.getAttribute('aria-label') || e.innerText).join('|');
  const ready = () => {
    const sel = view.querySelector('.tmc-selected');
    const m = sel && sel.innerText.match(/Reading topic (\\d+) · (\\S+)/);
    if (!m || Number(m[1]) !== wanted) return false;
    const bands = Array.from(view.querySelectorAll(".tmc-sources [aria-label^='selected topic ']"))
        .map(e => e.getAttribute('aria-label'));
    if (bands.length < 2 || !bands.every(b => b.startsWith('selected topic ' + wanted + ' ·')))
      return false;
    const first = Array.from(view.querySelectorAll(".tmc-terms [aria-label*='rank: 1']"))
        .map(e => e.getAttribute('aria-label'));
    if (!first.some(a => a.includes('term: ' + m[2] + ';'))) return false;
    const list = view.querySelector('.tmc-term-list');
    if (!list || !list.innerText.includes('Topic ' + wanted + ',')) return false;
    const wording = texts('.tmc-wording [aria-label]'), docs = texts('.tmc-doc');
    return wording && docs && wording !== window.__tmcBefore.wording
        && docs !== window.__tmcBefore.docs;
  };
  await new Promise((resolve, reject) => {
    const limit = setTimeout(() => reject(new Error('no repaint within 60 s')), 60000);
    const check = () => { if (ready()) { clearTimeout(limit); resolve(); }
                          else { requestAnimationFrame(check); } };
    check();
  });
  await new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)));
  const done = performance.now(), click = window.__tmcClick;
  const comms = window.__tmcMessages.filter(([t, kind]) => kind === 'comm_msg');
  const idle = window.__tmcMessages.filter(([t, kind]) => kind === 'idle').map(([t]) => t - click);
  return {ms: done - click, comms: comms.length,
          last_comm: comms.length ? comms[comms.length - 1][0] - click : null,
          idle: idle.length ? idle[0] : null};
}
"""


def notebook(docs: int, topics: int, source: Path | None, cold: bool = False) -> dict:
    """The bench notebook; ``source``: a folder whose ``tm_compare`` is imported instead;
    ``cold``: the view prepares no topic ahead (it is off in the baseline's views anyway)."""
    path = "" if source is None else f"sys.path.insert(0, {str(source)!r})\n"
    cold_line = "TopicView._prepare_others = lambda self: None\n" if cold else ""
    code = f"""import sys, time
{path}sys.path.insert(0, {str(HERE)!r})
from view_speed import synthetic
from tm_compare.views import TopicView
{cold_line}fit, prepared = synthetic({docs}, {topics}, 5000)
print(f"START_WALL={{time.time():.3f}}")
start = time.perf_counter()
view = TopicView(fit, prepared, n_boot=1000, poll_seconds=None)
display(view)
print(f"FIRST_VIEW_SECONDS={{time.perf_counter() - start:.2f}}")"""
    cell = {
        "cell_type": "code",
        "execution_count": None,
        "id": "bench",
        "metadata": {},
        "outputs": [],
        "source": code,
    }
    kernel = {"display_name": "Python 3 (ipykernel)", "language": "python", "name": "python3"}
    return {
        "cells": [cell],
        "metadata": {"kernelspec": kernel},
        "nbformat": 4,
        "nbformat_minor": 5,
    }


def unpack(ref: str, folder: Path) -> Path:
    """``tm_compare`` as of git ``ref``, unpacked into ``folder``."""
    archive = subprocess.run(
        ["git", "-C", str(REPO), "archive", ref, "tm_compare"], capture_output=True, check=True
    ).stdout
    folder.mkdir()
    subprocess.run(["tar", "-x", "-C", str(folder)], input=archive, check=True)
    return folder


def open_view(page, base: str, name: str) -> dict:
    """Open notebook ``name`` and run it; its view and the first-view timings."""
    from test_browser import KERNEL_IDLE, TOKEN, run_all_cells

    page.add_init_script(HOOK)
    page.goto(f"{base}/lab/tree/{name}?reset&token={TOKEN}")
    page.get_by_text(KERNEL_IDLE).first.wait_for(timeout=180_000)
    run_all_cells(page, timeout_s=900)
    view = page.locator(".tmc-topic-view").first
    view.locator(MARKS).first.wait_for(timeout=120_000)
    for part in (".tmc-terms [aria-label*='rank: 1']", ".tmc-wording [aria-label]", ".tmc-doc"):
        view.locator(part).first.wait_for(timeout=120_000)
    drawn = time.time()
    out = "\n".join(page.locator(".jp-OutputArea-output").all_inner_texts())
    start = float(re.search(r"START_WALL=([\d.]+)", out).group(1))
    first = float(re.search(r"FIRST_VIEW_SECONDS=([\d.]+)", out).group(1))
    cdp = page.context.new_cdp_session(page)
    cdp.send("Performance.enable")
    return {
        "page": page,
        "view": view,
        "cdp": cdp,
        "first": first,
        "drawn": drawn - start,
        "times": [],
        "parts": [],
    }


def _metrics(cdp) -> dict:
    return {m["name"]: m["value"] for m in cdp.send("Performance.getMetrics")["metrics"]}


def click_new_topic(side: dict) -> None:
    """Click a topic this side has not shown yet; add (topic, ms to every panel repainted) and
    the click's breakdown: the page's main-thread time (CPU, scripts, layout and style), kernel
    messages received and when the last one and the kernel's idle arrived."""
    page, view, times = side["page"], side["view"], side["times"]
    shown = view.locator(".tmc-selected").inner_text()
    selected = int(re.search(r"Reading topic (\d+)", shown).group(1))
    labels = view.locator(MARKS).evaluate_all("els => els.map(e => e.getAttribute('aria-label'))")
    topics = [int(re.search(r"name: (\d+) ·", a).group(1)) for a in labels]
    seen = {t for t, _ in times}
    index = next(i for i, t in enumerate(topics) if t != selected and t not in seen)
    page.bring_to_front()
    page.evaluate(ARM)
    before = _metrics(side["cdp"])
    view.locator(MARKS).nth(index).click(force=True)
    seen = page.evaluate(WAIT, [topics[index]])
    after = _metrics(side["cdp"])
    times.append((topics[index], seen.pop("ms")))
    seen.update({m: (after[m] - before[m]) * 1000 for m in METRICS})
    side["parts"].append(seen)


def breakdown(parts: list[dict]) -> str:
    """Medians over the clicks of the page's side of a switch."""

    def med(key):
        values = [p[key] for p in parts if p[key] is not None]
        return statistics.median(values) if values else float("nan")

    return (
        f"in the page (medians): main thread busy {med('ThreadTime'):.0f} ms of CPU (scripts "
        f"{med('ScriptDuration'):.0f}, layout and style "
        f"{med('LayoutDuration') + med('RecalcStyleDuration'):.0f}); {med('comms'):.0f} widget "
        f"messages received, the last {med('last_comm'):.0f} ms after the click; kernel idle "
        f"seen at {med('idle'):.0f} ms"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=200_000)
    parser.add_argument("--topics", type=int, default=50)
    parser.add_argument("--clicks", type=int, default=10)
    parser.add_argument("--baseline", default=BASELINE, help="git commit of the baseline views")
    parser.add_argument(
        "--cold",
        action="store_true",
        help="this tree's view prepares no topic while the kernel idles (each click computes)",
    )
    args = parser.parse_args()

    from _chromium import chromium
    from test_browser import jupyter_lab

    with tempfile.TemporaryDirectory(prefix="tm_compare_view_") as tmp:
        root, state = Path(tmp) / "lab", Path(tmp) / "state"
        root.mkdir()
        state.mkdir()
        old = unpack(args.baseline, Path(tmp) / "baseline")
        for name, source in (("current.ipynb", None), ("baseline.ipynb", old)):
            nb = notebook(args.docs, args.topics, source, cold=args.cold and source is None)
            (root / name).write_text(json.dumps(nb), encoding="utf-8")
        with jupyter_lab(root, state) as base, chromium() as browser:
            sides = {}
            for side in ("current", "baseline"):
                page = browser.new_page(viewport={"width": 1500, "height": 1100})
                sides[side] = open_view(page, base, f"{side}.ipynb")
            # Clicks alternate between the two views (both kernels alive), so that both sides
            # meet the same load on a shared machine.
            for _ in range(args.clicks):
                for side in sides.values():
                    click_new_topic(side)
                    time.sleep(0.5)  # let the kernel settle: clicks a reader makes, not a burst
            results = {
                name: {**side, "ms": [t for _, t in side["times"]]} for name, side in sides.items()
            }

    now, old = results["current"], results["baseline"]
    print(
        f"model: {args.docs:,} documents x {args.topics} topics (synthetic, as bench/view_speed.py); "
        f"baseline: the views of commit {args.baseline}, same JupyterLab, browser and checks, "
        "clicks alternating; this tree "
        + (
            "cold: each click computes its topic (--cold)"
            if args.cold
            else "warm: its view prepared every topic while the kernel idled (the clicks come "
            "after the baseline's view is drawn, seconds later; --cold to switch it off)"
        )
    )
    for label, side in (("this tree", now), ("baseline ", old)):
        ms = side["ms"]
        print(
            f"{label}: first TopicView {side['first']:.1f} s in the kernel "
            f"({side['drawn']:.1f} s until drawn in the page); topic switch, click to every panel "
            f"repainted: median {statistics.median(ms):.0f} ms, min {min(ms):.0f} ms, "
            f"max {max(ms):.0f} ms over {len(ms)} clicks on new topics"
        )
        print(f"  {breakdown(side['parts'])}")
    print(
        f"ratio (baseline / this tree): switch median "
        f"{statistics.median(old['ms']) / statistics.median(now['ms']):.1f}x, first view "
        f"{old['first'] / now['first']:.1f}x; goals: switch < 100 ms, first view < 5 s"
    )


if __name__ == "__main__":
    main()
