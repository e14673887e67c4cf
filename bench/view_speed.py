"""How fast the topic view follows a change of the selected topic, on a large model.

Times ``view.topic = t`` (every panel updated, Python side) for topics not visited before, on a
synthetic model of ``--docs`` documents x ``--topics`` topics, and compares it with recomputing
from scratch in the same process: calling the plain functions behind the panels (prevalence,
differences, term rankings, source wording, representative documents) for each switch, as a
notebook without the view's caches would. The baseline is slow, so it is timed on a few topics.

    python bench/view_speed.py --docs 200000 --topics 50
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np
import pandas as pd

from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus


def synthetic(n_docs: int, k: int, vocab: int, seed: int = 0):
    """A fit and prepared corpus of the shapes the view reads (two sources, readers as groups)."""
    rng = np.random.default_rng(seed)
    doc_topic = rng.dirichlet(np.full(k, 0.1), size=n_docs)
    topic_term = rng.dirichlet(np.full(vocab, 0.05), size=k)
    words = np.array([f"w{i}" for i in range(vocab)], dtype=object)
    terms_per_doc = 20
    ids = rng.integers(0, vocab, size=(n_docs, terms_per_doc))
    counts = rng.integers(1, 4, size=(n_docs, terms_per_doc))
    tokens = [words[np.repeat(r, c)].tolist() for r, c in zip(ids, counts, strict=True)]
    text = [" ".join(words[r]) for r in ids[:, :12]]
    sources = np.where(rng.random(n_docs) < 0.4, "shared", "visited")
    groups = np.array([f"reader_{g:04d}" for g in rng.integers(0, 2000, n_docs)], dtype=object)
    weights = rng.integers(1, 6, n_docs).astype(float)
    doc_ids = [f"d{i}" for i in range(n_docs)]
    meta = pd.DataFrame(
        {
            "id": doc_ids,
            "source": sources,
            "weight": weights,
            "group": groups,
            "title": [f"Article {i}" for i in range(n_docs)],
            "date": pd.Timestamp("2024-03-01"),
            "text": text,
            "outlet": rng.choice(["Gull Post", "Harbour Times"], n_docs),
        }
    )
    prepared = PreparedCorpus.from_texts(tokens, meta, vocab=words.tolist())
    return Fit.from_arrays(prepared, topic_term, doc_topic), prepared


def from_scratch(fit, prepared, topic: int, n_boot: int) -> None:
    """What one switch costs without the view: every plain function called again."""
    from tm_compare.compare import documents, terms
    from tm_compare.compare import prevalence as comparison

    comparison.prevalence(fit, prepared, n_boot=n_boot)
    comparison.differences(fit, prepared, n_boot=n_boot)
    terms.term_rankings(fit, prepared, "probability", n_terms=12)
    terms.source_wording(fit, prepared, topic, against="each", n_terms=8)
    documents.representative_documents(fit, prepared, topic, n_docs=4)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--docs", type=int, default=200_000)
    parser.add_argument("--topics", type=int, default=50)
    parser.add_argument("--vocab", type=int, default=5000)
    parser.add_argument("--switches", type=int, default=20, help="topic switches timed")
    parser.add_argument("--baseline", type=int, default=2, help="switches timed from scratch")
    parser.add_argument("--n-boot", type=int, default=1000)
    args = parser.parse_args()

    from tm_compare.views import TopicView

    t0 = time.perf_counter()
    fit, prepared = synthetic(args.docs, args.topics, args.vocab)
    print(
        f"synthetic model: {args.docs:,} documents x {args.topics} topics, {args.vocab:,} terms "
        f"({time.perf_counter() - t0:.1f} s to build)"
    )
    t0 = time.perf_counter()
    view = TopicView(fit, prepared, n_boot=args.n_boot, poll_seconds=None)
    print(f"view opened (per-model tables computed once): {time.perf_counter() - t0:.1f} s")

    order = [t for t in range(args.topics) if t != view.topic][: args.switches]
    times, parts = [], {"sources": [], "terms": [], "documents": []}
    for t in order:
        start = time.perf_counter()
        view.topic = t
        times.append(time.perf_counter() - start)
    # Where the time goes, on topics not visited yet (one more pass, each panel alone).
    fresh = [t for t in range(args.topics) if t not in order and t != view.topic][:5]
    for t in fresh:
        for name, panel in (
            ("sources", view.sources_panel),
            ("terms", view.terms_panel),
            ("documents", view.documents_panel),
        ):
            start = time.perf_counter()
            panel.show_topic(t)
            parts[name].append(time.perf_counter() - start)
    revisit = []
    for t in order[:5]:
        start = time.perf_counter()
        view.topic = t
        revisit.append(time.perf_counter() - start)

    base = []
    for t in order[: args.baseline]:
        start = time.perf_counter()
        from_scratch(fit, prepared, t, args.n_boot)
        base.append(time.perf_counter() - start)

    median = statistics.median(times)
    print(
        f"topic switch, first visit: median {median * 1000:.0f} ms over {len(times)} topics "
        f"(max {max(times) * 1000:.0f} ms); goal < 150 ms"
    )
    print(f"topic switch, revisit:     median {statistics.median(revisit) * 1000:.0f} ms")
    if fresh:
        print(
            "first visit by panel (median ms): "
            + ", ".join(f"{k} {statistics.median(v) * 1000:.0f}" for k, v in parts.items())
        )
    print(
        f"recomputing from scratch:  median {statistics.median(base) * 1000:.0f} ms over "
        f"{len(base)} topics (plain functions, no caches)"
    )
    print(f"ratio (from scratch / view): {statistics.median(base) / median:.1f}x")
    view.close()


if __name__ == "__main__":
    main()
