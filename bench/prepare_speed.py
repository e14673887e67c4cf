"""Speed and peak memory of ``tm_compare.prepare`` against a gensim pipeline doing the same work.

The peer, run in the same process on the same texts, is what a skilled researcher
writes by hand to get the same output as ``prepare``'s defaults:

1. boilerplate: lines found in at least 5% (and 5) of one outlet's articles are dropped
   (a ``collections.Counter`` of lines per outlet);
2. ``gensim.utils.simple_preprocess`` (lower case, alphabetic tokens of 2-40 letters);
3. ``Phrases`` bigrams with prepare's settings (min_count 5, threshold 10, the English
   connector words that are stop words), applied;
4. stop words removed (the same English list);
5. ``Dictionary.filter_extremes(no_below=5, no_above=0.5, keep_n=100000)``, documents
   under 10 tokens dropped, ``doc2bow``.

It does no near-duplicate detection, so ours runs twice: with its defaults and with
``near_duplicates=None`` (the same work as the peer). Each side runs ``--runs`` times,
interleaved; min and median seconds are printed. Peak memory is measured with
``tracemalloc`` (Python and numpy allocations) in one more run of each pipeline.

    python bench/prepare_speed.py --docs 20000
"""

from __future__ import annotations

import argparse
import gc
import time
import tracemalloc
from collections import Counter

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


def baseline(frame: pd.DataFrame):
    from gensim.models.phrases import ENGLISH_CONNECTOR_WORDS

    from tm_compare.text._stopwords import ENGLISH as STOP

    # 1. Boilerplate: frequent lines within an outlet.
    texts, outlets = frame["text"].tolist(), frame["outlet"].astype(str).tolist()
    seen: dict[str, Counter] = {}
    sizes = Counter(outlets)
    for text, outlet in zip(texts, outlets, strict=True):
        seen.setdefault(outlet, Counter()).update(set(text.split("\n")))
    frequent = {
        o: {line for line, c in lines.items() if c >= max(5, 0.05 * sizes[o])}
        for o, lines in seen.items()
    }
    texts = [
        "\n".join(line for line in text.split("\n") if line not in frequent[outlet])
        for text, outlet in zip(texts, outlets, strict=True)
    ]
    # 2-4. Tokens, phrases, stop words.
    docs = [simple_preprocess(t, min_len=2, max_len=40) for t in texts]
    frozen = Phrases(
        docs, min_count=5, threshold=10.0, connector_words=ENGLISH_CONNECTOR_WORDS & STOP
    ).freeze()
    docs = [[w for w in frozen[d] if w not in STOP] for d in docs]
    # 5. Pruning and bags of words.
    dictionary = Dictionary(docs)
    dictionary.filter_extremes(no_below=5, no_above=0.5, keep_n=100_000)
    known = dictionary.token2id
    docs = [[w for w in d if w in known] for d in docs]
    docs = [d for d in docs if len(d) >= 10]
    bow = [dictionary.doc2bow(d) for d in docs]
    return docs, dictionary, bow


def ours(corpus: Corpus):
    return prepare(corpus, progress=False)


def ours_same_work(corpus: Corpus):
    return prepare(corpus, progress=False, near_duplicates=None)


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
    parser.add_argument("--runs", type=int, default=3, help="runs of each side (default 3)")
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

    sides = {
        "prepare (defaults)": (ours, corpus),
        "prepare, no near-dups": (ours_same_work, corpus),
        "gensim peer": (baseline, frame),
    }
    times = {name: [] for name in sides}
    for _ in range(args.runs):
        for name, (fn, arg) in sides.items():
            times[name].append(timed(fn, arg))
    peer_med = float(np.median(times["gensim peer"]))
    print(f"runs: {args.runs} per side, interleaved, one process")
    print(f"{'':24}{'min s':>8}{'median s':>10}{'docs/s':>9}{'peer / this':>13}")
    for name, values in times.items():
        med = float(np.median(values))
        print(
            f"{name:24}{min(values):8.2f}{med:10.2f}{len(texts) / med:9.0f}{peer_med / med:12.2f}x"
        )
    if not args.no_memory:
        for name, (fn, arg) in sides.items():
            m = peak_mib(fn, arg)
            print(f"peak memory {name}: {m:.0f} MiB ({m / text_mib:.1f} x the text)")
    print("ratio = peer median / median (higher: faster than the peer); goal 2x")


if __name__ == "__main__":
    main()
