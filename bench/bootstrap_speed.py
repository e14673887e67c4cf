"""Time the clustered bootstrap of topic prevalence against a naive loop, in one process.

The naive baseline is what one would write first: for every replicate, draw clusters
with replacement within each source, gather their documents, and take the weighted
mean of their topic shares. It runs a few replicates and is scaled to the full count.

    python bench/bootstrap_speed.py --docs 200000 --topics 50 --replicates 1000
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd

from tm_compare.compare.prevalence import prevalence
from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus


def synthetic(n_docs, k, n_sources, n_clusters, seed=0):
    rng = np.random.default_rng(seed)
    shares = rng.dirichlet(np.full(k, 0.1), n_docs)
    sources = np.array([f"source{i}" for i in range(n_sources)])[rng.integers(0, n_sources, n_docs)]
    groups = np.array([f"reader{i}" for i in range(n_clusters)], dtype=object)[
        rng.integers(0, n_clusters, n_docs)
    ]
    weights = rng.integers(1, 20, n_docs).astype(float)
    ids = [f"d{i}" for i in range(n_docs)]
    meta = pd.DataFrame({"id": ids, "source": sources, "weight": weights, "group": groups})
    # Prevalence reads no words: empty documents over a one-term vocabulary.
    prepared = PreparedCorpus.from_texts([[] for _ in ids], meta, vocab=["w"])
    return Fit.from_arrays(prepared, np.ones((k, 1)), shares), prepared


def naive(fit, prepared, n_boot, seed=0):
    rng = np.random.default_rng(seed)
    sources, groups, weights = prepared.sources, prepared.groups, prepared.weights
    members = {}  # source -> list of document index arrays, one per cluster (built once)
    for source in np.unique(sources):
        in_source = np.flatnonzero(sources == source)
        frame = pd.Series(in_source).groupby(groups[in_source])
        members[source] = [idx.to_numpy() for _, idx in frame]
    out = []
    for _ in range(n_boot):
        rows = []
        for clusters in members.values():
            drawn = rng.integers(0, len(clusters), len(clusters))
            docs = np.concatenate([clusters[i] for i in drawn])
            rows.append(np.average(fit.doc_topic[docs], axis=0, weights=weights[docs]))
        out.append(rows)
    return np.array(out)


def timed(func, *args, **kwargs):
    """Wall-clock and CPU seconds of one call (CPU time shows the cost on a busy machine)."""
    wall, cpu = time.perf_counter(), time.process_time()
    func(*args, **kwargs)
    return time.perf_counter() - wall, time.process_time() - cpu


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=200_000)
    parser.add_argument("--topics", type=int, default=50)
    parser.add_argument("--sources", type=int, default=3)
    parser.add_argument("--clusters", type=int, default=2_000, help="readers (clusters) in all")
    parser.add_argument("--replicates", type=int, default=1000)
    parser.add_argument("--naive-replicates", type=int, default=20, help="run, then scaled up")
    args = parser.parse_args()
    fit, prepared = synthetic(args.docs, args.topics, args.sources, args.clusters)
    print(
        f"{args.docs:,} documents x {args.topics} topics, {args.sources} sources, "
        f"{args.clusters:,} clusters, {args.replicates:,} replicates"
    )
    ours, ours_cpu = timed(prevalence, fit, prepared, n_boot=args.replicates, cluster="group")
    base, base_cpu = (
        t * args.replicates / args.naive_replicates
        for t in timed(naive, fit, prepared, args.naive_replicates)
    )
    print(f"{'case':<26}{'wall s':>9}{'cpu s':>9}")
    print(f"{'clustered, percentile':<26}{ours:9.2f}{ours_cpu:9.2f}")
    print(f"{'naive loop (scaled)':<26}{base:9.1f}{base_cpu:9.1f}")
    print(f"ratio naive / ours: wall {base / ours:.0f}x, cpu {base_cpu / ours_cpu:.0f}x")
    cases = [
        ("clustered, BCa", {"cluster": "group", "interval": "bca"}),
        ("documents, multinomial", {"cluster": None}),
        ("documents, poisson", {"cluster": None, "resampling": "poisson"}),
    ]
    for name, kwargs in cases:
        wall, cpu = timed(prevalence, fit, prepared, n_boot=args.replicates, **kwargs)
        print(f"{name:<26}{wall:9.2f}{cpu:9.2f}")


if __name__ == "__main__":
    main()
