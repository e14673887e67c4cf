"""Speed and peak memory of ``tm_compare.prepare`` against a plain gensim loop.

The baseline, run in the same process on the same texts, is what a
researcher would write by hand: ``gensim.utils.simple_preprocess`` on every
text, ``Phrases`` (bigrams, gensim defaults) learnt and applied, then a
``Dictionary`` with ``filter_extremes`` and ``doc2bow``. It does no
boilerplate removal, near-duplicate detection, stop words or caching, so a
ratio near 1 means those come at little extra cost.

Peak memory is measured with ``tracemalloc`` (Python and numpy allocations)
in a second run of each pipeline, so the timing runs are not slowed by it.

    python bench/prepare_speed.py --docs 20000
"""

from __future__ import annotations

import argparse
import gc
import time
import tracemalloc

import numpy as np
import pandas as pd
from gensim.corpora import Dictionary
from gensim.models.phrases import Phrases
from gensim.utils import simple_preprocess

from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare


def news_frame(n: int, seed: int) -> pd.DataFrame:
    """Invented news-like articles: the demo scenario when available, else a plain generator."""
    try:
        from tm_compare.demo import quillhaven as demo

        return demo.make_frame(n, seed)
    except ImportError:
        return _plain_frame(n, seed)


def _plain_frame(n: int, seed: int) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    words = [
        f"{a}{b}"
        for a in ("har", "quill", "salt", "gull", "lan", "mar", "tor", "wick")
        for b in ("bour", "haven", "reach", "cry", "tern", "ket", "den", "ford", "ley")
    ]
    glue = ["the", "of", "and", "to", "a", "in", "said", "council", "city", "on"]
    vocab = np.array(words + glue, dtype=object)
    p = np.r_[np.full(len(words), 0.4 / len(words)), np.full(len(glue), 0.6 / len(glue))]
    texts = []
    for _ in range(n):
        paras = [
            " ".join(rng.choice(vocab, size=int(rng.integers(40, 90)), p=p)) + "."
            for _ in range(int(rng.integers(3, 9)))
        ]
        texts.append("\n".join(paras + ["Sign up for the Quillhaven morning newsletter."]))
    return pd.DataFrame(
        {
            "text": texts,
            "source": rng.choice(["shared", "visited"], size=n),
            "outlet": rng.choice(["Courier", "Gullcry"], size=n),
        }
    )


def baseline(texts: list[str]):
    docs = [simple_preprocess(t) for t in texts]
    frozen = Phrases(docs, min_count=5, threshold=10.0).freeze()
    docs = [frozen[d] for d in docs]
    dictionary = Dictionary(docs)
    dictionary.filter_extremes(no_below=5, no_above=0.5, keep_n=100_000)
    bow = [dictionary.doc2bow(d) for d in docs]
    return docs, dictionary, bow


def ours(corpus: Corpus):
    return prepare(corpus, progress=False)


def timed(fn, arg) -> float:
    gc.collect()
    start = time.perf_counter()
    result = fn(arg)
    seconds = time.perf_counter() - start
    del result
    return seconds


def peak_mib(fn, arg) -> float:
    gc.collect()
    tracemalloc.start()
    result = fn(arg)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    del result
    return peak / 2**20


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--docs", type=int, default=20_000, help="number of articles (default 20000)"
    )
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--no-memory", action="store_true", help="skip the tracemalloc runs")
    args = parser.parse_args(argv)

    frame = news_frame(args.docs, args.seed)
    corpus = Corpus.from_frame(frame, text="text", source="source")
    texts = corpus.frame["text"].tolist()
    text_mib = sum(len(t.encode("utf-8")) for t in texts) / 2**20
    words = sum(len(t.split()) for t in texts)
    print(
        f"{len(texts)} documents, {words / len(texts):.0f} words each on average, "
        f"{text_mib:.1f} MiB of text"
    )

    t_base = timed(baseline, texts)
    t_ours = timed(ours, corpus)
    rows = [
        ("time (s)", t_ours, t_base),
        ("documents / s", len(texts) / t_ours, len(texts) / t_base),
    ]
    if not args.no_memory:
        m_base = peak_mib(baseline, texts)
        m_ours = peak_mib(ours, corpus)
        rows += [
            ("peak memory (MiB)", m_ours, m_base),
            ("peak memory / text size", m_ours / text_mib, m_base / text_mib),
        ]
    print(f"{'':26}{'prepare':>12}{'gensim loop':>14}{'ratio':>9}")
    for name, a, b in rows:
        print(f"{name:26}{a:12.1f}{b:14.1f}{a / b:9.2f}")
    print("ratio = prepare / gensim loop (time: lower is faster; documents/s: higher is faster)")


if __name__ == "__main__":
    main()
