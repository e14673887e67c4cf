"""Time prevalence over time against the loop a user would write with ``prevalence()``, in one
process, and the over-time BCa acceleration against the generic jackknife.

Baseline 1: one ``prevalence()`` call per period, on that period's documents (the same
bootstrap strata and numbers; building the per-period corpora and fits is left out of its time,
which favours the baseline). Baseline 2: ``_bootstrap.jackknife_acceleration``, which leaves out
every unit for every source-period cell.

    python bench/over_time_speed.py --docs 50000 --topics 30 --readers 2000 --runs 3
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np
import pandas as pd

from tm_compare.compare import _bootstrap as bs
from tm_compare.compare import over_time as ot
from tm_compare.compare.prevalence import prevalence
from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus

warnings.simplefilter("ignore")  # thin periods, if any, are not what is timed


def synthetic(n_docs, k, n_readers, days=122, seed=0):
    rng = np.random.default_rng(seed)
    meta = pd.DataFrame(
        {
            "id": [f"d{i}" for i in range(n_docs)],
            "source": np.where(rng.random(n_docs) < 0.4, "shared", "visited"),
            "weight": rng.integers(1, 6, n_docs).astype(float),
            "group": np.array([f"r{g}" for g in rng.integers(0, n_readers, n_docs)], dtype=object),
            "date": pd.Timestamp("2024-03-01")
            + pd.to_timedelta(rng.integers(0, days, n_docs), "D"),
        }
    )
    # Prevalence reads no words: empty documents over a one-term vocabulary.
    prepared = PreparedCorpus.from_texts([[] for _ in range(n_docs)], meta, vocab=["w"])
    return Fit.from_arrays(
        prepared, np.ones((k, 1)), rng.dirichlet(np.full(k, 0.3), n_docs)
    ), prepared


def per_period(fit, prepared, freq):
    """(fit, prepared) of each period's documents, built before the clock starts."""
    periods = pd.DatetimeIndex(prepared.meta["date"]).to_period(freq)
    out = []
    for period in sorted(set(periods)):
        rows = np.flatnonzero(periods == period)
        meta = prepared.meta.iloc[rows].reset_index(drop=True)
        sub = PreparedCorpus.from_texts([[] for _ in rows], meta, vocab=["w"])
        out.append((Fit.from_arrays(sub, fit.topic_term, fit.doc_topic[rows]), sub))
    return out


def clock(func):
    start = time.perf_counter()
    func()
    return time.perf_counter() - start


def report(name, ours, base):
    ours, base = np.array(ours), np.array(base)
    print(
        f"{name}: ours min {ours.min():.2f} s / median {np.median(ours):.2f} s; baseline min "
        f"{base.min():.2f} s / median {np.median(base):.2f} s; ratio (baseline / ours, medians) "
        f"{np.median(base) / np.median(ours):.1f}x"
    )


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=50_000)
    parser.add_argument("--topics", type=int, default=30)
    parser.add_argument("--readers", type=int, default=2_000)
    parser.add_argument("--replicates", type=int, default=1_000)
    parser.add_argument("--freq", default="W")
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    fit, prepared = synthetic(args.docs, args.topics, args.readers)
    pieces = per_period(fit, prepared, args.freq)
    settings = {"n_boot": args.replicates, "cluster": "group"}
    ours, base = [], []
    for _ in range(args.runs):
        ours.append(
            clock(lambda: ot.prevalence_over_time(fit, prepared, freq=args.freq, **settings))
        )
        base.append(clock(lambda: [prevalence(f, p, **settings) for f, p in pieces]))
    print(
        f"{args.docs:,} documents, {args.topics} topics, {args.readers:,} readers, "
        f"{len(pieces)} periods ({args.freq}), {args.replicates} replicates, {args.runs} runs"
    )
    report("prevalence over time vs a prevalence() call per period", ours, base)
    boot = {"n_boot": args.replicates}
    cells = ot._cells("bench", fit, prepared, args.freq, "exposure", "group", None, 10, boot)
    one = np.eye(len(cells.measured))
    ours, base = [], []
    for _ in range(args.runs):
        ours.append(clock(lambda: ot._acceleration(cells.units, one)))
        base.append(clock(lambda: bs.jackknife_acceleration(cells.units, ot._prevalence_stat)))
    report("BCa acceleration vs the generic jackknife", ours, base)


if __name__ == "__main__":
    main()
