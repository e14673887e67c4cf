"""``tm-compare compare PROJECT --k K``: compare sources under one model of the sweep.

A thin layer over :mod:`tm_compare.comparison`, :mod:`tm_compare.terms` and
:mod:`tm_compare.documents`: it writes their tables as CSV files to
``PROJECT/comparison/k{K}_seed{S}/`` and prints the most different topics.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import pandas as pd

SUMMARY_ROWS = 5


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "compare",
        help="compare topic prevalence between sources for one model of the sweep",
        description=(
            "For the model with K topics (and seed S) of the project's sweep: prevalence of "
            "every topic in every source with bootstrap intervals, differences between "
            "sources with Benjamini-Hochberg adjusted p-values, the influence check, term "
            "rankings and representative documents, written as CSV files to "
            "PROJECT/comparison/k{K}_seed{S}/. Prints the most different topics."
        ),
    )
    parser.add_argument("project", metavar="PROJECT", help="project folder with a sweep")
    parser.add_argument("--k", type=int, required=True, help="number of topics of the model")
    parser.add_argument("--seed", type=int, default=0, help="seed of the model (default 0)")
    parser.add_argument(
        "--weight",
        choices=("exposure", "unique"),
        default="exposure",
        help="count documents by exposure (their weight) or once each (default exposure)",
    )
    parser.add_argument(
        "--by-group",
        action="store_true",
        help="resample whole groups (e.g. readers) instead of documents for the intervals",
    )
    parser.add_argument(
        "--against",
        choices=("each", "rest"),
        default="each",
        help="compare every pair of sources, or each source with the rest",
    )
    parser.add_argument(
        "--n-boot", type=int, default=1000, help="bootstrap replicates (default 1000)"
    )
    parser.add_argument("--random-state", type=int, default=0, help="seed of the bootstrap")
    parser.set_defaults(func=run)


def _load(project_path: str, k: int, seed: int):
    from ..models.sweeps import load_fit
    from ..project import Project
    from ..text.prepared import load_prepared

    project = Project.open(project_path)
    fit = load_fit(project, k, seed)
    return project, fit, load_prepared(project, fit.corpus_fingerprint)


def tables(
    fit, prepared, *, weighting, cluster, against, n_boot, random_state
) -> dict[str, pd.DataFrame]:
    """Every table of the comparison, by file stem."""
    from ..compare.documents import representative_documents
    from ..compare.prevalence import differences, influence, prevalence
    from ..compare.terms import term_rankings

    common = {
        "weighting": weighting,
        "cluster": cluster,
        "n_boot": n_boot,
        "random_state": random_state,
    }
    suffix = f"{weighting}-{cluster or 'document'}"
    out = {f"prevalence-{suffix}": prevalence(fit, prepared, **common)}
    if len(set(prepared.sources.tolist())) > 1:
        out[f"differences-{suffix}"] = differences(fit, prepared, against=against, **common)
    out[f"influence-{weighting}"] = influence(prepared, weighting=weighting, warn=False)
    out["terms"] = pd.concat(
        [
            term_rankings(fit, method, topn=15, prepared=prepared)
            for method in ("probability", "frex", "relevance", "lift")
        ],
        ignore_index=True,
    )
    out["documents"] = representative_documents(fit, prepared)
    return out


def summary(table: pd.DataFrame, fit, rows: int = SUMMARY_ROWS) -> pd.DataFrame:
    """The most different topics of each comparison, for the terminal."""
    words = [" ".join(w) for w in fit.top_words(4)]
    top = table[table["rank"] <= rows].copy()
    top["top words"] = [words[t] for t in top["topic"]]
    top["difference (CI)"] = [
        f"{d:+.3f} ({lo:+.3f}, {hi:+.3f})"
        for d, lo, hi in top[["difference", "diff_ci_low", "diff_ci_high"]].itertuples(index=False)
    ]
    top["p adj."] = top["p_adjusted"].map("{:.3g}".format)
    top["comparison"] = top["source"] + " vs " + top["other"]
    return top[
        [
            "comparison",
            "topic",
            "top words",
            "prevalence",
            "prevalence_other",
            "difference (CI)",
            "p adj.",
        ]
    ].round(3)


def run(args) -> int:
    from .._atomic import atomic_path

    project, fit, prepared = _load(args.project, args.k, args.seed)
    cluster = "group" if args.by_group else None
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        made = tables(
            fit,
            prepared,
            weighting=args.weight,
            cluster=cluster,
            against=args.against,
            n_boot=args.n_boot,
            random_state=args.random_state,
        )
    folder = Path(project.folder("comparison")) / f"k{args.k}_seed{args.seed}"
    for stem, table in made.items():
        with atomic_path(folder / f"{stem}.csv") as tmp:
            table.to_csv(tmp, index=False)
    for note in caught:
        print(f"Note: {note.message}", file=sys.stderr)
    flagged = made[f"influence-{args.weight}"].query("flagged")
    for row in flagged.itertuples(index=False):
        print(
            f"Note: group {row.group!r} carries {row.share:.0%} of {row.source!r} "
            f"({args.weight} weighting).",
            file=sys.stderr,
        )
    diff = next((t for s, t in made.items() if s.startswith("differences")), None)
    print(
        f"Model k={args.k}, seed={args.seed}; weighting: {args.weight}; intervals resample "
        f"{'groups' if cluster else 'documents'} ({args.n_boot} replicates)."
    )
    if diff is None:
        print("One source only: no differences to show.")
    else:
        print(summary(diff, fit).to_string(index=False))
    print(f"Wrote {len(made)} tables to {folder}")
    return 0
