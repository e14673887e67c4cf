"""Time the bootstrap of topic prevalence against its peers, in one run.

Ours runs in one process with up to three threads on this machine's cores: the caller
draws the replicates' counts (compiled, as bytes) while two threads widen drawn blocks
and multiply them with the unit sums (one BLAS thread each). Each peer therefore runs in two processes at once,
each process timed on a sample of the work, and is scaled to the full count (the output
states the sample and the factor); the pair's wall time covers two samples.

Documents (the default unclustered path, multinomial): the peer is
``scipy.stats.bootstrap`` itself, the reference our replicates equal exactly: per
source and topic, the paired bootstrap of ``sum(w * theta) / sum(w)`` with the
vectorised statistic, timed on one source and one topic with ``--scipy-replicates``
replicates per process.

Clustered (readers): the peer is the loop one writes first: for every replicate, draw
clusters with replacement within each source, gather their documents, and take the
weighted mean of their topic shares; ``--naive-replicates`` replicates per process.

Every case runs ``--runs`` times, ours and its peer alternating; min and median of wall
and CPU seconds are printed (CPU summed over threads or processes). The first call of
ours, which compiles the counting code or loads it from numba's cache, is printed apart.

    python bench/bootstrap_speed.py --docs 200000 --topics 50 --replicates 1000
"""

from __future__ import annotations

import argparse
import multiprocessing
import os
import time
from concurrent.futures import ProcessPoolExecutor

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


def naive_setup(fit, prepared):
    """What the loop builds once: each source's clusters as document index arrays."""
    sources, groups = prepared.sources, prepared.groups
    members = []
    for source in np.unique(sources):
        in_source = np.flatnonzero(sources == source)
        frame = pd.Series(in_source).groupby(groups[in_source])
        members.append([idx.to_numpy() for _, idx in frame])
    return fit.doc_topic, prepared.weights, members


def naive(data, n_boot, seed=0):
    shares, weights, members = data
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n_boot):
        rows = []
        for clusters in members:
            drawn = rng.integers(0, len(clusters), len(clusters))
            docs = np.concatenate([clusters[i] for i in drawn])
            rows.append(np.average(shares[docs], axis=0, weights=weights[docs]))
        out.append(rows)
    return np.array(out)


def scipy_setup(fit, prepared):
    """One topic's weighted shares and the weights of the first source's documents."""
    in_source = np.flatnonzero(prepared.sources == np.unique(prepared.sources)[0])
    w = prepared.weights[in_source]
    return fit.doc_topic[in_source, 0] * w, w


def scipy_peer(data, n_boot, seed=0):
    """scipy.stats.bootstrap of one topic's weighted mean in the first source."""

    def ratio(a, b, axis=-1):
        return a.sum(axis=axis) / b.sum(axis=axis)

    stats.bootstrap(
        data,
        ratio,
        paired=True,
        vectorized=True,
        n_resamples=n_boot,
        batch=10,
        method="percentile",
        rng=np.random.default_rng(seed),
    )


_DATA: dict = {}  # corpus, fit and the peers' inputs, built in this process and in each peer's
_PEERS = {"scipy": scipy_peer, "naive": naive}


def _load(docs, topics, sources, clusters):
    """Build the data of this process (the peers' processes build their own: a forked peer
    would share this process's pages copy-on-write, and every write of ours to them would then
    pay a page copy, which slowed ours by about a fifth)."""
    fit, prepared = synthetic(docs, topics, sources, clusters)
    _DATA.update(
        fit=fit,
        prepared=prepared,
        scipy=scipy_setup(fit, prepared),
        naive=naive_setup(fit, prepared),
    )


def _peer_in_worker(name, n_boot, seed):
    return timed(_PEERS[name], _DATA[name], n_boot, seed)


def peer_pair(pool, name, n_boot):
    """Wall seconds of two peer samples run at once, and their CPU seconds summed."""
    wall = time.perf_counter()
    jobs = [pool.submit(_peer_in_worker, name, n_boot, seed) for seed in (0, 1)]
    cpu = sum(job.result()[1] for job in jobs)
    return time.perf_counter() - wall, cpu


def timed(func, *args, **kwargs):
    """Wall-clock and CPU seconds of one call (CPU time shows the cost on a busy machine)."""
    wall, cpu = time.perf_counter(), time.process_time()
    func(*args, **kwargs)
    return time.perf_counter() - wall, time.process_time() - cpu


def summary(times, scale=1.0):
    """(min, median) of wall and of CPU seconds, each multiplied by ``scale``."""
    walls, cpus = zip(*times, strict=True)
    return tuple((min(t) * scale, float(np.median(t)) * scale) for t in (walls, cpus))


def compare(args, pool, ours_kwargs, peer, peer_replicates, peer_scale):
    """Ours and two peer samples alternating ``args.runs`` times: both summaries."""
    ours, theirs = [], []
    for _ in range(args.runs):
        ours.append(timed(prevalence, _DATA["fit"], _DATA["prepared"], **ours_kwargs))
        theirs.append(peer_pair(pool, peer, peer_replicates))
    return summary(ours), summary(theirs, peer_scale / 2)


def stages(fit, prepared, n_boot, runs):
    """CPU seconds (min over runs) of each stage of the default path, one stage at a time."""
    from threadpoolctl import threadpool_limits

    from tm_compare.compare import _bootstrap as bs
    from tm_compare.compare import prevalence as pv

    def best(func):
        return min(timed(func)[1] for _ in range(runs))

    design = pv._design(fit, prepared, "prevalence", "exposure", None, None)
    units = design.units()
    blocks = []  # (n, rows) of every block, as replicate() draws them

    for a, b in units.bounds():
        step = max(1, bs._BLOCK // (b - a))
        blocks += [(a, b, min(step, n_boot - start)) for start in range(0, n_boot, step)]

    def draws():
        rng = np.random.default_rng(0)
        for a, b, rows in blocks:
            bs.draw_counts(b - a, rows, rng, "multinomial")

    one = {}
    for a, b, rows in blocks:  # one block of counts per shape, drawn off the clock
        one.setdefault(
            (b - a, rows), bs.draw_counts(b - a, rows, np.random.default_rng(0), "multinomial")
        )

    def products():
        with threadpool_limits(limits=1, user_api="blas"):
            for a, b, rows in blocks:
                one[(b - a, rows)].times(units.sums[a:b])

    reps = bs.replicate(units, n_boot, np.random.default_rng(0))
    return {
        "checks and design": best(
            lambda: pv._design(fit, prepared, "prevalence", "exposure", None, None)
        ),
        "unit sums (D x (k+1))": best(design.units),
        "draws + byte counts (serial)": best(draws),
        "count x sums products (BLAS)": best(products),
        "estimates and intervals": best(
            lambda: pv._summary(
                units, reps, pv._prevalence_stat, 0.95, "percentile", bs.stratum_acceleration
            )
        ),
    }


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=200_000)
    parser.add_argument("--topics", type=int, default=50)
    parser.add_argument("--sources", type=int, default=3)
    parser.add_argument("--clusters", type=int, default=2_000, help="readers (clusters) in all")
    parser.add_argument("--replicates", type=int, default=1000)
    parser.add_argument("--naive-replicates", type=int, default=20, help="per process, scaled")
    parser.add_argument("--scipy-replicates", type=int, default=50, help="per process, scaled")
    parser.add_argument("--runs", type=int, default=5, help="runs of each side per case")
    args = parser.parse_args()
    shape = (args.docs, args.topics, args.sources, args.clusters)
    _load(*shape)
    fit, prepared = _DATA["fit"], _DATA["prepared"]
    print(
        f"{args.docs:,} documents x {args.topics} topics, {args.sources} sources, "
        f"{args.clusters:,} clusters, {args.replicates:,} replicates; {args.runs} runs a side; "
        f"ours: 1 process, 3 threads; peers: 2 processes; {os.cpu_count()} cores"
    )
    print(f"{'case':<34}{'wall min':>9}{'median':>8}{'cpu min':>9}{'median':>8}")

    def row(name, wall, cpu, note=""):
        print(f"{name:<34}{wall[0]:9.2f}{wall[1]:8.2f}{cpu[0]:9.2f}{cpu[1]:8.2f}{note}")

    def ratio(peer, ours, goal=""):
        print(
            f"{'':<4}ratio peer / ours (median): wall {peer[0][1] / ours[0][1]:.0f}x, "
            f"cpu {peer[1][1] / ours[1][1]:.0f}x{goal}"
        )

    base = {"n_boot": args.replicates}
    first = timed(prevalence, fit, prepared, cluster=None, **base)
    print(f"{'first call (numba compile/cache)':<34}{first[0]:9.2f}{'':8}{first[1]:9.2f}")
    spawn = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(2, mp_context=spawn, initializer=_load, initargs=shape) as pool:
        list(pool.map(_peer_in_worker, ["scipy"] * 2, [10] * 2, [0, 1]))  # start both
        scale = args.replicates / args.scipy_replicates * args.topics * args.sources
        ours, peer = compare(
            args, pool, {**base, "cluster": None}, "scipy", args.scipy_replicates, scale
        )
        row("documents, multinomial (default)", *ours)
        row(
            "scipy.stats.bootstrap (scaled)",
            *peer,
            f"  {args.scipy_replicates} replicates of 1 source x 1 topic a process, "
            f"x{scale / 2:,.0f}",
        )
        ratio(peer, ours, "; goal: ours under 1 s wall (median)")
        parts = stages(fit, prepared, args.replicates, args.runs)
        for name, seconds in parts.items():
            print(f"    {name:<32}{'':17}{seconds:9.2f}   cpu, one thread, min of {args.runs}")
        print(
            f"    {'sum of stages':<32}{'':17}{sum(parts.values()):9.2f}   "
            "(draws run beside the products, which run two at a time)"
        )
        scale = args.replicates / args.naive_replicates
        ours, peer = compare(
            args, pool, {**base, "cluster": "group"}, "naive", args.naive_replicates, scale
        )
        row("clustered, percentile", *ours)
        row(
            "naive loop (scaled)",
            *peer,
            f"  {args.naive_replicates} replicates a process, x{scale / 2:,.0f}",
        )
        ratio(peer, ours)
    cases = [
        ("clustered, BCa", {"cluster": "group", "interval": "bca"}),
        ("documents, BCa", {"cluster": None, "interval": "bca"}),
        ("documents, poisson", {"cluster": None, "resampling": "poisson"}),
    ]
    for name, kwargs in cases:
        times = [timed(prevalence, fit, prepared, **base, **kwargs) for _ in range(args.runs)]
        row(name, *summary(times))


if __name__ == "__main__":
    main()
