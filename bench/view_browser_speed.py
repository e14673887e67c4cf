"""Topic switch in a real browser: from a click on a chart mark to the repainted view.

JupyterLab on 127.0.0.1 and headless Debian Chromium (Playwright; never a downloaded
browser) run a notebook that builds the synthetic model of ``bench/view_speed.py``
(``--docs`` x ``--topics``) and shows a ``TopicView``. The script then clicks marks of
the sources chart, one topic at a time, and times in the page, with ``performance.now()``:
from the click to the moment the view reads the new topic and its term chart is redrawn,
plus two animation frames (the browser has painted). The first ``TopicView`` on the
model is timed inside the kernel (construction and display).

Peer: none in the browser (no other view of this data exists to click); the Python-side
ratio against recomputing from scratch is in ``bench/view_speed.py``.

    python bench/view_browser_speed.py --docs 200000 --topics 50 --clicks 10
"""

from __future__ import annotations

import argparse
import json
import re
import statistics
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE))

# Runs in the page before the click: note the time of the next mouse press (capture phase).
ARM = """
() => { window.__tmcClick = null;
  document.addEventListener('mousedown', () => { window.__tmcClick = performance.now(); },
                            {capture: true, once: true}); }
"""
# Runs in the page after the click: resolve with ms from the press until the view reads the
# wanted topic and its term chart ranks that topic's first word first (redrawn), plus two
# animation frames (painted).
WAIT = """
async ([wanted]) => {
  const view = document.querySelector('.tmc-topic-view');
  const ready = () => {
    const sel = view.querySelector('.tmc-selected');
    const m = sel && sel.innerText.match(/Reading topic (\\d+) · (\\S+)/);
    if (!m || Number(m[1]) !== wanted) return false;
    const first = Array.from(view.querySelectorAll(".tmc-terms [aria-label*='rank: 1']"))
        .map(e => e.getAttribute('aria-label'));
    return first.some(a => a.includes('term: ' + m[2] + ';'));
  };
  await new Promise((resolve, reject) => {
    const limit = setTimeout(() => reject(new Error('no repaint within 60 s')), 60000);
    const check = () => { if (ready()) { clearTimeout(limit); resolve(); }
                          else { requestAnimationFrame(check); } };
    check();
  });
  await new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)));
  return performance.now() - window.__tmcClick;
}
"""


def notebook(docs: int, topics: int, bench_dir: Path) -> dict:
    code = f"""import sys, time
sys.path.insert(0, {str(bench_dir)!r})
from view_speed import synthetic
from tm_compare.views import TopicView
fit, prepared = synthetic({docs}, {topics}, 5000)
start = time.perf_counter()
view = TopicView(fit, prepared, n_boot=1000, poll_seconds=None)
display(view)
print(f"FIRST_VIEW_SECONDS={{time.perf_counter() - start:.2f}}")"""
    return {
        "cells": [
            {
                "cell_type": "code",
                "execution_count": None,
                "id": "bench",
                "metadata": {},
                "outputs": [],
                "source": code,
            }
        ],
        "metadata": {
            "kernelspec": {
                "display_name": "Python 3 (ipykernel)",
                "language": "python",
                "name": "python3",
            }
        },
        "nbformat": 4,
        "nbformat_minor": 5,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=200_000)
    parser.add_argument("--topics", type=int, default=50)
    parser.add_argument("--clicks", type=int, default=10)
    args = parser.parse_args()

    from _chromium import chromium
    from test_browser import KERNEL_IDLE, TOKEN, jupyter_lab, run_all_cells

    with tempfile.TemporaryDirectory(prefix="tm_compare_view_") as tmp:
        root, state = Path(tmp) / "lab", Path(tmp) / "state"
        root.mkdir()
        state.mkdir()
        nb = notebook(args.docs, args.topics, HERE)
        (root / "bench.ipynb").write_text(json.dumps(nb), encoding="utf-8")
        with jupyter_lab(root, state) as base, chromium() as browser:
            page = browser.new_page(viewport={"width": 1500, "height": 1100})
            page.goto(f"{base}/lab/tree/bench.ipynb?reset&token={TOKEN}")
            page.get_by_text(KERNEL_IDLE).first.wait_for(timeout=180_000)
            run_all_cells(page, timeout_s=900)
            view = page.locator(".tmc-topic-view").first
            view.locator(".tmc-sources path[aria-label*='name: ']").first.wait_for(timeout=120_000)
            out = page.locator(".jp-OutputArea-output").all_inner_texts()
            first = next(
                float(m.group(1))
                for t in out
                if (m := re.search(r"FIRST_VIEW_SECONDS=([\d.]+)", t))
            )
            times = []
            for _ in range(args.clicks):
                selected = int(
                    re.search(
                        r"Reading topic (\d+)", view.locator(".tmc-selected").inner_text()
                    ).group(1)
                )
                labels = view.locator(".tmc-sources path[aria-label*='name: ']").evaluate_all(
                    "els => els.map(e => e.getAttribute('aria-label'))"
                )
                topics = [int(re.search(r"name: (\d+) ·", a).group(1)) for a in labels]
                index = next(
                    i
                    for i, t in enumerate(topics)
                    if t != selected and t not in visited(times, topics)
                )
                page.evaluate(ARM)
                view.locator(".tmc-sources path[aria-label*='name: ']").nth(index).click(force=True)
                times.append((topics[index], page.evaluate(WAIT, [topics[index]])))
    ms = [t for _, t in times]
    print(
        f"model: {args.docs:,} documents x {args.topics} topics (synthetic, as bench/view_speed.py)"
    )
    print(f"first TopicView (built and displayed, in the kernel): {first:.1f} s; goal < 5 s")
    print(
        f"topic switch, click to repaint in headless Chromium: median {statistics.median(ms):.0f} ms, "
        f"min {min(ms):.0f} ms, max {max(ms):.0f} ms over {len(ms)} clicks on new topics; goal < 100 ms"
    )


def visited(times, topics) -> set[int]:
    return {t for t, _ in times}


if __name__ == "__main__":
    main()
