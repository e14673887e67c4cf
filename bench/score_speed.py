"""Time coherence scoring of a whole sweep: CoherenceScorer against gensim's CoherenceModel.

The corpus is synthetic: documents drawn from planted topics (Zipf-shaped word
distributions over a shared vocabulary, document mixtures from a Dirichlet).
The sweep's topic word lists (k = 5..40 step 5, 3 seeds = 24 models) are
sampled from the planted topic distributions rather than fitted, to keep the
benchmark about scoring: each model topic blends one or two planted topics with
noise and takes the 10 most probable words.

Ours: one CoherenceScorer counts the union of all 24 models' top words once
(one pass per window size) and scores every model. Baseline: gensim's
``CoherenceModel(topics=..., texts=..., dictionary=..., coherence=m, processes=1)
.get_coherence_per_topic()`` per model and measure, which recomputes its counts
every time; it is timed on a sample of models and scaled linearly to 24.

    python bench/score_speed.py              # 20,000 documents (baseline takes ~10 min)
    python bench/score_speed.py --docs 2000  # quicker
"""

from __future__ import annotations

import argparse
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


def main():
    parser = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    parser.add_argument(
        "--docs", type=int, default=20_000, help="number of documents (default 20,000)"
    )
    parser.add_argument("--doc-length", type=int, default=300, help="mean tokens per document")
    parser.add_argument(
        "--baseline-models",
        type=int,
        default=1,
        help="models timed with gensim (default 1; 0 skips the baseline)",
    )
    args = parser.parse_args()
    warnings.filterwarnings("ignore", category=RuntimeWarning)

    t0 = time.perf_counter()
    texts, topics, vocab = synthetic_corpus(args.docs, args.doc_length)
    dictionary = Dictionary(texts)
    models = sampled_models(topics, vocab, ks=range(5, 41, 5), n_seeds=3)
    n_tokens = sum(map(len, texts))
    print(
        f"corpus: {len(texts):,} documents, {n_tokens:,} tokens, {len(dictionary):,} word types "
        f"(generated in {time.perf_counter() - t0:.1f} s)"
    )
    print(
        f"sweep: {len(models)} models (k = 5..40 step 5 x 3 seeds), top 10 words, measures {', '.join(MEASURES)}"
    )
    print("topic word lists: sampled from the planted topic distributions (no LDA fits)")

    t0 = time.perf_counter()
    scorer = CoherenceScorer(texts, dictionary, measures=MEASURES).fit(list(models.values()))
    t_fit = time.perf_counter() - t0
    ours = {key: scorer.score(top) for key, top in models.items()}
    t_ours = time.perf_counter() - t0
    print(
        f"ours: {t_ours:.2f} s for the whole sweep, all measures "
        f"(counting {t_fit:.2f} s for {len(scorer.words_):,} union words, scoring {t_ours - t_fit:.2f} s)"
    )

    if args.baseline_models < 1:
        print("gensim baseline skipped (--baseline-models 0)")
        return
    keys = list(models)
    picks = np.linspace(0, len(keys) - 1, args.baseline_models + 2)[1:-1].round().astype(int)
    sample = [keys[i] for i in picks]
    per_measure = {}
    max_diff = 0.0
    for m in MEASURES:
        spent = 0.0
        for key in sample:
            t0 = time.perf_counter()
            ref = CoherenceModel(
                topics=models[key],
                texts=texts,
                dictionary=dictionary,
                coherence=GENSIM_NAMES[m],
                topn=10,
                processes=1,
            ).get_coherence_per_topic()
            spent += time.perf_counter() - t0
            max_diff = max(max_diff, float(np.nanmax(np.abs(np.asarray(ref) - ours[key][m]))))
        per_measure[m] = spent / len(sample)
        print(f"gensim {m}: {per_measure[m]:.2f} s per model")
    t_gensim = sum(per_measure.values()) * len(models)
    print(
        f"gensim baseline: timed on {len(sample)} model(s) {sample} per measure and scaled linearly "
        f"to {len(models)} models: {t_gensim:.1f} s"
    )
    print(f"speed-up: {t_gensim / t_ours:.1f}x (goal >= 50x)")
    print(f"max |ours - gensim| over the sampled models, all measures: {max_diff:.3g}")


if __name__ == "__main__":
    main()
