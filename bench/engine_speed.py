"""One LDA fit on the demo corpus: the compiled engine against the gensim engine.

Both engines run the same algorithm with the same settings and seed (online variational
Bayes, gensim's schedule, one pass at a time with the same stopping rule), on the same
prepared Quillhaven demo corpus and the same held-out documents; the bench checks that
they agree (largest difference of the topics and of gamma, relative) and times each
``--runs`` times, interleaved, single-threaded. The first compiled fit of the process is
timed separately (it loads the compiled kernels from numba's cache, or compiles them).

    python bench/engine_speed.py               # 20,000 documents, k = 9 and 20
    python bench/engine_speed.py --docs 3000 --runs 3
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=20_000, help="demo documents [20000]")
    parser.add_argument("--k", default="9,20", help="topics, comma-separated [9,20]")
    parser.add_argument("--runs", type=int, default=3, help="runs of each engine [3]")
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)

    from sweep_speed import demo_corpus
    from threadpoolctl import threadpool_limits

    from tm_compare.models import _engines
    from tm_compare.models.fits import TrainingData

    prepared, _ = demo_corpus(args.docs)
    data = TrainingData.from_prepared(prepared)
    matrix, heldout, vocab = data.matrix, data.heldout, data.vocab
    print(
        f"Quillhaven demo: {len(prepared)} prepared documents ({int(heldout.sum())} held out), "
        f"{len(vocab)} terms, {matrix.nnz:,} non-zero counts; default settings "
        f"{_engines.DEFAULT_SETTINGS}; {args.runs} run(s) per engine, interleaved."
    )

    def fit(engine, k):
        start = time.perf_counter()
        with threadpool_limits(limits=1):
            result = _engines.run(engine, matrix, heldout, k, args.seed, {}, vocab)
        return result, time.perf_counter() - start

    first = time.perf_counter()
    from tm_compare.models import _vb

    _vb.digamma(1.0)
    print(f"compiled kernels ready in {time.perf_counter() - first:.2f} s (first use)")
    for k in (int(v) for v in args.k.split(",")):
        times = {"compiled": [], "gensim": []}
        results = {}
        for _ in range(args.runs):
            for engine in times:
                results[engine], seconds = fit(engine, k)
                times[engine].append(seconds)
        a, b = results["compiled"], results["gensim"]
        tt = np.max(np.abs(a.topic_term - b.topic_term) / b.topic_term)
        gamma = np.max(np.abs(a.gamma - b.gamma) / b.gamma)
        print(
            f"\nk = {k}: passes {a.passes_used} / {b.passes_used}, converged "
            f"{a.converged} / {b.converged}, held-out bound {a.word_bound:.10f} / "
            f"{b.word_bound:.10f}; largest relative difference: topics {tt:.1e}, gamma "
            f"{gamma:.1e}"
        )
        for engine, values in times.items():
            print(f"  {engine:<9} min {min(values):7.2f} s  median {np.median(values):7.2f} s")
        print(
            f"  gensim / compiled: {min(times['gensim']) / min(times['compiled']):.1f}x (min), "
            f"{np.median(times['gensim']) / np.median(times['compiled']):.1f}x (median)"
        )


if __name__ == "__main__":
    main()
