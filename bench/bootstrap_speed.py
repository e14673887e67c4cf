"""Time the bootstrap of topic prevalence against its peers, in one process.

Clustered (readers): the peer is the loop one writes first: for every replicate, draw
clusters with replacement within each source, gather their documents, and take the
weighted mean of their topic shares. It runs ``--naive-replicates`` replicates and is
scaled to the full count (the output says so).

Documents (the default unclustered path, multinomial): the peer is
``scipy.stats.bootstrap`` itself, the reference our replicates equal exactly: per
source and topic, the paired bootstrap of ``sum(w * theta) / sum(w)`` with the
vectorised statistic. It is timed on one source and one topic with
``--scipy-replicates`` replicates and scaled to all sources, topics and replicates.

Ours runs ``--runs`` times (interleaved with the peers where they run more than once);
min and median of wall and CPU seconds are printed.

    python bench/bootstrap_speed.py --docs 200000 --topics 50 --replicates 1000
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd
from scipy import stats

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


def scipy_peer(fit, prepared, n_boot, seed=0):
    """scipy.stats.bootstrap of one topic's weighted mean in the first source."""
    in_source = np.flatnonzero(prepared.sources == np.unique(prepared.sources)[0])
    w = prepared.weights[in_source]
    x = fit.doc_topic[in_source, 0] * w

    def ratio(a, b, axis=-1):
        return a.sum(axis=axis) / b.sum(axis=axis)

    stats.bootstrap(
        (x, w),
        ratio,
        paired=True,
        vectorized=True,
        n_resamples=n_boot,
        batch=10,
        method="percentile",
        rng=np.random.default_rng(seed),
    )


def timed(func, *args, **kwargs):
    """Wall-clock and CPU seconds of one call (CPU time shows the cost on a busy machine)."""
    wall, cpu = time.perf_counter(), time.process_time()
    func(*args, **kwargs)
    return time.perf_counter() - wall, time.process_time() - cpu


def repeated(runs, func, *args, **kwargs):
    """(min, median) of wall and of CPU seconds over ``runs`` calls."""
    walls, cpus = zip(*(timed(func, *args, **kwargs) for _ in range(runs)), strict=True)
    return (min(walls), float(np.median(walls))), (min(cpus), float(np.median(cpus)))


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=200_000)
    parser.add_argument("--topics", type=int, default=50)
    parser.add_argument("--sources", type=int, default=3)
    parser.add_argument("--clusters", type=int, default=2_000, help="readers (clusters) in all")
    parser.add_argument("--replicates", type=int, default=1000)
    parser.add_argument("--naive-replicates", type=int, default=20, help="run, then scaled up")
    parser.add_argument("--scipy-replicates", type=int, default=50, help="run, then scaled up")
    parser.add_argument("--runs", type=int, default=5, help="runs of ours per case")
    args = parser.parse_args()
    fit, prepared = synthetic(args.docs, args.topics, args.sources, args.clusters)
    print(
        f"{args.docs:,} documents x {args.topics} topics, {args.sources} sources, "
        f"{args.clusters:,} clusters, {args.replicates:,} replicates; ours {args.runs} runs"
    )
    print(f"{'case':<30}{'wall min':>9}{'median':>8}{'cpu min':>9}{'median':>8}")

    def row(name, wall, cpu):
        print(f"{name:<30}{wall[0]:9.2f}{wall[1]:8.2f}{cpu[0]:9.2f}{cpu[1]:8.2f}")

    docs = repeated(args.runs, prevalence, fit, prepared, n_boot=args.replicates, cluster=None)
    row("documents, multinomial (default)", *docs)
    scale = args.replicates / args.scipy_replicates * args.topics * args.sources
    peer = [t * scale for t in timed(scipy_peer, fit, prepared, args.scipy_replicates)]
    print(
        f"{'scipy.stats.bootstrap (scaled)':<30}{peer[0]:9.1f}{'':8}{peer[1]:9.1f}"
        f"   timed on 1 source x 1 topic x {args.scipy_replicates} replicates, "
        f"scaled x{scale:,.0f}"
    )
    print(
        f"ratio scipy / ours (median): wall {peer[0] / docs[0][1]:.0f}x, "
        f"cpu {peer[1] / docs[1][1]:.0f}x; goal: ours under 1 s wall (median)"
    )
    clustered = repeated(
        args.runs, prevalence, fit, prepared, n_boot=args.replicates, cluster="group"
    )
    row("clustered, percentile", *clustered)
    base = [
        t * args.replicates / args.naive_replicates
        for t in timed(naive, fit, prepared, args.naive_replicates)
    ]
    print(
        f"{'naive loop (scaled)':<30}{base[0]:9.1f}{'':8}{base[1]:9.1f}"
        f"   timed on {args.naive_replicates} replicates, scaled to {args.replicates:,}"
    )
    print(
        f"ratio naive / ours (median): wall {base[0] / clustered[0][1]:.0f}x, "
        f"cpu {base[1] / clustered[1][1]:.0f}x"
    )
    cases = [
        ("clustered, BCa", {"cluster": "group", "interval": "bca"}),
        ("documents, poisson", {"cluster": None, "resampling": "poisson"}),
    ]
    for name, kwargs in cases:
        row(name, *repeated(args.runs, prevalence, fit, prepared, n_boot=args.replicates, **kwargs))


if __name__ == "__main__":
    main()
