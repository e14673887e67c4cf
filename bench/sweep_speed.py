"""End to end: our sweep (fit + score) against the plain notebook loop.

The baseline is what a notebook does by hand::

    for k in grid:
        for seed in seeds:
            lda = LdaModel(corpus, id2word=dictionary, num_topics=k, random_state=seed, ...)
            CoherenceModel(model=lda, texts=texts, dictionary=dictionary, coherence="c_v")

with the same fit settings and training documents as the sweep. The baseline
is slow (gensim recounts co-occurrences for every model), so it runs on a
sample of the grid's models (``--baseline-models``) and is scaled linearly to
the whole grid; the output says so. Our sweep runs the whole grid, fits in
``--jobs`` processes, with all four coherence measures, perplexity,
stability and diversity.

The corpus is synthetic (an LDA generative process over invented words):
``python bench/sweep_speed.py --docs 2000`` for a quick run.
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time

import numpy as np


def synthetic_corpus(n_docs: int, doc_length: int, vocab_size: int, n_topics: int, seed: int):
    """Documents drawn from LDA: topics ~ Dir(0.05) over invented words, mixes ~ Dir(0.1)."""
    import pandas as pd

    from tm_compare.text.prepared import PreparedCorpus

    rng = np.random.default_rng(seed)
    syllables = ["ka", "lo", "mir", "ten", "qua", "vel", "dor", "sa", "pin", "ruk", "ye", "zo"]
    words = sorted({"".join(rng.choice(syllables, size=3)) + str(i) for i in range(vocab_size)})
    topics = rng.dirichlet(np.full(len(words), 0.05), size=n_topics)
    texts = []
    for _ in range(n_docs):
        theta = rng.dirichlet(np.full(n_topics, 0.1))
        counts = rng.multinomial(max(1, rng.poisson(doc_length)), theta @ topics)
        ids = np.repeat(np.arange(len(words)), counts)
        rng.shuffle(ids)
        texts.append([words[i] for i in ids])
    meta = pd.DataFrame({"id": [f"doc{i}" for i in range(n_docs)], "source": "synthetic"})
    return PreparedCorpus.from_texts(texts, meta)


def run_ours(prepared, grid, seeds, jobs, settings, project):
    import tm_compare.models.sweeps as sweep_module

    scoring = []
    real_score = sweep_module._score

    def timed_score(*args, **kwargs):
        start = time.perf_counter()
        out = real_score(*args, **kwargs)
        scoring.append(time.perf_counter() - start)
        return out

    sweep_module._score = timed_score
    try:
        start = time.perf_counter()
        result = sweep_module.sweep(
            prepared, k=grid, seeds=seeds, project=project, n_jobs=jobs, progress=False, **settings
        )
        total = time.perf_counter() - start
    finally:
        sweep_module._score = real_score
    return result, total, scoring[0]


def run_baseline(prepared, models, heldout, settings):
    """The notebook loop on ``models``: per model fit seconds, C_V seconds, C_V per topic."""
    from gensim.models import CoherenceModel, LdaModel

    train = [doc for doc, held in zip(prepared.bow, heldout, strict=True) if not held]
    out = []
    for k, seed in models:
        start = time.perf_counter()
        lda = LdaModel(
            train,
            id2word=prepared.dictionary,
            num_topics=k,
            random_state=seed,
            passes=settings["passes"],
            iterations=settings["iterations"],
            chunksize=settings["chunksize"],
            eval_every=None,
            dtype=np.float64,
        )
        fitted = time.perf_counter()
        cv = CoherenceModel(
            model=lda,
            texts=prepared.texts,
            dictionary=prepared.dictionary,
            coherence="c_v",
            topn=10,
            processes=1,
        ).get_coherence_per_topic()
        out.append(
            {
                "k": k,
                "seed": seed,
                "fit": fitted - start,
                "c_v": time.perf_counter() - fitted,
                "per_topic": np.asarray(cv),
            }
        )
    return out


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=20_000)
    parser.add_argument("--doc-length", type=int, default=300, help="mean tokens per document")
    parser.add_argument("--vocab", type=int, default=5000)
    parser.add_argument("--k", default="5:40:5", help="grid START:STOP:STEP, STOP included")
    parser.add_argument("--seeds", type=int, default=3)
    parser.add_argument("--passes", type=int, default=1)
    parser.add_argument("--jobs", type=int, default=2, help="worker processes of our sweep")
    parser.add_argument(
        "--baseline-models",
        type=int,
        default=2,
        help="models of the grid the baseline runs (then scaled) [2]",
    )
    args = parser.parse_args(argv)

    from tm_compare.cli._sweep import k_grid

    grid = k_grid(args.k)
    settings = {"passes": args.passes, "iterations": 50, "chunksize": 2000}
    print(
        f"Synthetic corpus: {args.docs} documents of ~{args.doc_length} tokens, "
        f"{args.vocab} words, 20 planted topics."
    )
    prepared = synthetic_corpus(args.docs, args.doc_length, args.vocab, 20, seed=0)
    n_models = len(grid) * args.seeds
    print(
        f"Grid: k = {grid}, {args.seeds} seeds = {n_models} models; fit settings {settings}, "
        "10% of documents held out."
    )

    project = tempfile.mkdtemp(prefix="tm_compare-bench-")  # fits saved as in real use
    result, ours_total, ours_scoring = run_ours(
        prepared, grid, args.seeds, args.jobs, settings, project
    )
    fit_sum = float(result.scores_["fit_seconds"].sum())
    print(
        f"\nOurs ({args.jobs} processes): {ours_total:.1f} s end to end, of which scoring "
        f"(NPMI, C_V, UCI, UMass, stability, diversity for all {n_models} models) "
        f"{ours_scoring:.2f} s."
    )
    print(
        f"Scoring overhead: {100 * ours_scoring / fit_sum:.2f}% of total fit time "
        f"({fit_sum:.1f} s summed over fits; goal < 10%)."
    )

    picks = np.linspace(0, n_models - 1, args.baseline_models).round().astype(int)
    models = [[(k, s) for k in grid for s in range(args.seeds)][i] for i in sorted(set(picks))]
    heldout = result.get_fit(*models[0]).heldout
    base = run_baseline(prepared, models, heldout, settings)
    per_model = np.mean([b["fit"] + b["c_v"] for b in base])
    base_total = per_model * n_models
    ours_cv = {
        (b["k"], b["seed"]): result.topic_scores_.query(f"k == {b['k']} and seed == {b['seed']}")[
            "c_v"
        ].to_numpy()
        for b in base
    }
    diff = max(float(np.max(np.abs(ours_cv[(b["k"], b["seed"])] - b["per_topic"]))) for b in base)
    print(
        f"\nBaseline (notebook loop, 1 process) run on {len(base)} of {n_models} models "
        f"{[(b['k'], b['seed']) for b in base]} and SCALED linearly to the grid:"
    )
    for b in base:
        print(f"  k={b['k']} seed={b['seed']}: fit {b['fit']:.1f} s, C_V {b['c_v']:.1f} s")
    print(
        f"  estimated grid total {base_total:.0f} s "
        f"(mean {per_model:.1f} s per model x {n_models})."
    )
    print(f"  largest |C_V ours - gensim| per topic on those models: {diff:.2e}")
    print(f"\nEnd-to-end ratio baseline / ours: {base_total / ours_total:.1f}x (goal >= 5x).")
    base_cv = np.mean([b["c_v"] for b in base]) * n_models
    print(
        f"Scoring alone, ratio gensim C_V only / ours all measures: "
        f"{base_cv / ours_scoring:.0f}x (scaled as above)."
    )
    shutil.rmtree(project)


if __name__ == "__main__":
    main()
