"""Time coherence scoring of a whole sweep: CoherenceScorer against gensim's CoherenceModel.

The corpus is synthetic: documents drawn from planted topics (Zipf-shaped word
distributions over a shared vocabulary, document mixtures from a Dirichlet).
The sweep's topic word lists (k = 5..40 step 5, 3 seeds = 24 models) are
sampled from the planted topic distributions rather than fitted, to keep the
benchmark about scoring: each model topic blends one or two planted topics with
noise and takes the 10 most probable words.

Ours: one CoherenceScorer counts the union of all 24 models' top words once
(one pass per window size) and scores every model; it starts from the texts
(its token index is built inside the timing).

Peer (the strongest a skilled gensim user writes, one process): one
``CoherenceModel(topics=<all 24 models' topics>, texts=..., dictionary=...,
coherence=m, processes=1).get_coherence_per_topic()`` per measure, so each
measure's accumulator counts the union of all top words once; NPMI and UCI
share one window-10 accumulator (the model is re-used with ``coherence``
switched, which keeps gensim's accumulator). Both sides run ``--runs`` times,
interleaved; min and median are printed and the ratios use both.

A second, weaker peer (one ``CoherenceModel`` per model and measure, as in the
gensim tutorials) is timed on ``--per-model-sample`` models and scaled linearly
to 24 (the output says so); 0 skips it.

    python bench/score_speed.py              # 20,000 documents
    python bench/score_speed.py --docs 5000 --runs 3
"""

from __future__ import annotations

import argparse
import gc
import time
import warnings

import numpy as np
from gensim.corpora import Dictionary
from gensim.models import CoherenceModel

from tm_compare.models.scores import MEASURES, CoherenceScorer

GENSIM_NAMES = {"npmi": "c_npmi", "c_v": "c_v", "uci": "c_uci", "umass": "u_mass"}


def synthetic_corpus(n_docs, doc_length=300, n_topics=50, vocab_size=10000, seed=0):
    """Documents of ~doc_length tokens drawn from planted topics; returns (texts, topic-word matrix)."""
    rng = np.random.default_rng(seed)
    vocab = np.array([f"w{i:05d}" for i in range(vocab_size)])
    ranks = np.arange(1, vocab_size + 1)
    topics = np.empty((n_topics, vocab_size))
    for t in range(n_topics):
        topics[t, rng.permutation(vocab_size)] = 1.0 / ranks
    topics /= topics.sum(axis=1, keepdims=True)
    cdf = np.cumsum(topics, axis=1)
    mix = rng.dirichlet(np.full(n_topics, 0.1), size=n_docs)
    lengths = rng.poisson(doc_length, size=n_docs)
    doc_of = np.repeat(np.arange(n_docs), lengths)
    # Inverse-CDF draws for all tokens at once: document d's cumulative topic
    # shares are shifted by d, so one sorted array serves every document.
    shares = np.cumsum(mix, axis=1)
    shares[:, -1] = 1.0
    shifted = (shares + np.arange(n_docs)[:, None]).ravel()
    topic_of = (
        np.searchsorted(shifted, doc_of + rng.random(len(doc_of)) * 0.999999) - doc_of * n_topics
    )
    topic_of = np.clip(topic_of, 0, n_topics - 1)
    words = np.empty(len(doc_of), dtype=np.int64)
    for t in range(n_topics):
        at = np.flatnonzero(topic_of == t)
        words[at] = np.minimum(np.searchsorted(cdf[t], rng.random(len(at))), vocab_size - 1)
    bounds = np.concatenate(([0], np.cumsum(lengths)))
    tokens = vocab[words].tolist()
    texts = [tokens[bounds[d] : bounds[d + 1]] for d in range(n_docs)]
    return texts, topics, vocab


def sampled_models(topics, vocab, ks, n_seeds, topn=10):
    """Top-word lists per (k, seed): blends of one or two planted topics plus noise."""
    models = {}
    for k in ks:
        for seed in range(n_seeds):
            rng = np.random.default_rng(1000 * k + seed)
            rows = []
            for _ in range(k):
                picks = rng.choice(len(topics), size=2, replace=False)
                share = rng.uniform(0.5, 1.0)
                dist = share * topics[picks[0]] + (1 - share) * topics[picks[1]]
                dist = dist * rng.lognormal(0.0, 0.5, size=dist.shape)
                rows.append(vocab[np.argsort(-dist)[:topn]].tolist())
            models[(k, seed)] = rows
    return models


def _per_topic(cm):
    return np.asarray(cm.get_coherence_per_topic(), dtype=float)


def peer_shared(texts, dictionary, union_topics, measures):
    """gensim with one accumulator per window over the union of all topics; seconds per measure."""
    out, seconds = {}, {}
    window10 = None
    for m in ("umass", "c_v", "npmi", "uci"):
        if m not in measures:
            continue
        t0 = time.perf_counter()
        if m == "uci" and window10 is not None:
            window10.coherence = "c_uci"  # keeps the window-10 accumulator
            cm = window10
        else:
            cm = CoherenceModel(
                topics=union_topics,
                texts=texts,
                dictionary=dictionary,
                coherence=GENSIM_NAMES[m],
                topn=10,
                processes=1,
            )
            if m == "npmi":
                window10 = cm
        out[m] = _per_topic(cm)
        seconds[m] = time.perf_counter() - t0
    return out, seconds


def ours_run(texts, dictionary, models, measures):
    t0 = time.perf_counter()
    scorer = CoherenceScorer(texts, dictionary, measures=measures).fit(list(models.values()))
    scores = {key: scorer.score(top) for key, top in models.items()}
    return scores, time.perf_counter() - t0, len(scorer.words_)


def _stats(values):
    return min(values), float(np.median(values))


def main():
    parser = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    parser.add_argument(
        "--docs", type=int, default=20_000, help="number of documents (default 20,000)"
    )
    parser.add_argument("--doc-length", type=int, default=300, help="mean tokens per document")
    parser.add_argument("--runs", type=int, default=3, help="runs of each side (default 3)")
    parser.add_argument(
        "--per-model-sample",
        type=int,
        default=0,
        help="models timed with one CoherenceModel each, scaled to 24 (default 0: skipped)",
    )
    args = parser.parse_args()
    warnings.filterwarnings("ignore", category=RuntimeWarning)

    t0 = time.perf_counter()
    texts, topics, vocab = synthetic_corpus(args.docs, args.doc_length)
    dictionary = Dictionary(texts)
    models = sampled_models(topics, vocab, ks=range(5, 41, 5), n_seeds=3)
    keys = list(models)
    union_topics = [t for key in keys for t in models[key]]
    n_tokens = sum(map(len, texts))
    print(
        f"corpus: {len(texts):,} documents, {n_tokens:,} tokens, {len(dictionary):,} word types "
        f"(generated in {time.perf_counter() - t0:.1f} s)"
    )
    print(
        f"sweep: {len(models)} models (k = 5..40 step 5 x 3 seeds, {len(union_topics)} topics), "
        f"top 10 words, measures {', '.join(MEASURES)}"
    )
    print("topic word lists: sampled from the planted topic distributions (no LDA fits)")
    print(f"runs: {args.runs} per side, interleaved, one process")

    # Rows: each measure alone on both sides; NPMI + UCI sharing the window-10 counts on both
    # sides (gensim re-uses its accumulator, ours counts window 10 once); all four together.
    groups = {
        "npmi": ("npmi",),
        "c_v": ("c_v",),
        "umass": ("umass",),
        "npmi + uci": ("npmi", "uci"),
        "all four": MEASURES,
    }
    mine_t = {g: [] for g in groups}
    peer_t = {g: [] for g in groups}
    max_diff = 0.0
    for _ in range(args.runs):
        for name, measures in groups.items():
            gc.collect()
            scores, seconds, n_words = ours_run(texts, dictionary, models, measures)
            mine_t[name].append(seconds)
        gc.collect()
        ref, spent = peer_shared(texts, dictionary, union_topics, MEASURES)
        for name, measures in groups.items():
            peer_t[name].append(sum(spent[m] for m in measures))
        for m in MEASURES:  # scores of the last group: all four measures
            mine = np.concatenate([scores[key][m] for key in keys])
            both = np.isfinite(ref[m]) & np.isfinite(mine)
            max_diff = max(max_diff, float(np.max(np.abs(ref[m][both] - mine[both]))))

    print(f"union: {n_words:,} words")
    print(
        f"{'measures':<14}{'ours min':>10}{'median':>9}{'peer min':>10}{'median':>9}"
        f"{'ratio min':>11}{'median':>9}"
    )
    for name in groups:
        (a_min, a_med), (b_min, b_med) = _stats(mine_t[name]), _stats(peer_t[name])
        print(
            f"{name:<14}{a_min:10.3f}{a_med:9.3f}{b_min:10.2f}{b_med:9.2f}"
            f"{b_min / a_min:10.1f}x{b_med / a_med:8.1f}x"
        )
    print(
        "peer: one gensim CoherenceModel per measure over the union of all topics; "
        "NPMI and UCI share its window-10 accumulator"
    )
    print("ours: one CoherenceScorer per row, from the texts (token index included)")
    print("goal: all four >= 50x, every measure >= 10x")
    print(f"max |ours - gensim| over all {len(union_topics)} topics and measures: {max_diff:.3g}")
    ours_all = mine_t["all four"]

    if args.per_model_sample < 1:
        return
    picks = np.linspace(0, len(keys) - 1, args.per_model_sample + 2)[1:-1].round().astype(int)
    sample = [keys[i] for i in picks]
    spent = 0.0
    for m in MEASURES:
        for key in sample:
            t0 = time.perf_counter()
            CoherenceModel(
                topics=models[key],
                texts=texts,
                dictionary=dictionary,
                coherence=GENSIM_NAMES[m],
                topn=10,
                processes=1,
            ).get_coherence_per_topic()
            spent += time.perf_counter() - t0
    scaled = spent / len(sample) * len(models)
    print(
        f"weaker peer, one CoherenceModel per model and measure: timed on {len(sample)} model(s) "
        f"{sample} and scaled linearly to {len(models)} models: {scaled:.1f} s, "
        f"{scaled / _stats(ours_all)[1]:.0f}x ours (median)"
    )


if __name__ == "__main__":
    main()
