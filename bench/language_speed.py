"""Language detection: ours (py3langid, as ``prepare(language="auto")`` runs it) against langdetect.

The baseline is what a researcher would write by hand for a mixed corpus: ``langdetect.detect``
on every text with ``DetectorFactory.seed = 0`` (without the seed its answers change between
runs). Both read the invented mixed German/English demo (``tm_compare.demo``, language "de+en"),
whose planted language per article is the truth, so the script prints speed (documents per
second, min and median of several runs) and accuracy of each. It also prints what detection adds
to ``prepare``: ``language="auto"`` against ``language="en"`` on the same corpus.

    python bench/language_speed.py --docs 2000 --runs 3
"""

from __future__ import annotations

import argparse
import statistics
import time
import warnings

import numpy as np

from tm_compare.demo import scenario
from tm_compare.text.corpus import Corpus
from tm_compare.text.languages import detect_languages
from tm_compare.text.prepared import prepare


def timed(fn, runs: int) -> tuple[list[float], object]:
    times, out = [], None
    for _ in range(runs):
        start = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - start)
    return times, out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=2000)
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    frame, planted = scenario(args.docs, 0, "de+en")
    texts, truth = frame["text"].tolist(), planted.docs["language"].to_numpy(str)
    detect_languages(texts[:1])  # load the model once, outside the timing

    ours_t, ours = timed(lambda: detect_languages(texts, ["de", "en"])[0], args.runs)
    rows = [("py3langid (ours, de/en)", ours_t, np.mean(ours.astype(str) == truth))]
    try:
        from langdetect import DetectorFactory, detect

        DetectorFactory.seed = 0
        base_t, base = timed(lambda: np.array([detect(t) for t in texts]), args.runs)
        rows.append(("langdetect, seed 0 (baseline)", base_t, np.mean(base == truth)))
    except ImportError:
        print("langdetect is not installed: no baseline (pip install langdetect)")
    for name, t, acc in rows:
        print(
            f"{name:32s} {len(texts) / min(t):9.0f} docs/s (best), "
            f"{len(texts) / statistics.median(t):9.0f} (median), accuracy {acc:.4f}"
        )
    if len(rows) == 2:
        print(f"speed ratio ours/baseline (best runs): {min(rows[1][1]) / min(rows[0][1]):.1f}x")

    corpus = Corpus.from_frame(frame, text="text", source="source", id="id", group="reader")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        auto_t, _ = timed(lambda: prepare(corpus, language="auto", progress=False), args.runs)
    fixed_t, _ = timed(lambda: prepare(corpus, language="en", progress=False), args.runs)
    print(
        f"prepare: language='auto' {min(auto_t):.2f} s, language='en' {min(fixed_t):.2f} s "
        f"(best runs): detection adds {min(auto_t) / min(fixed_t) - 1:.0%}"
    )


if __name__ == "__main__":
    main()
