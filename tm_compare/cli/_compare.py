"""``tm-compare compare PROJECT --k K``: compare sources under one model of the sweep.

A thin layer over :class:`tm_compare.results.ModelResults`: it writes the model's comparison
tables as CSV files to ``PROJECT/comparison/k{K}_seed{S}/`` and prints the most different
topics. The flags of the settings (:func:`add_settings`) are shared with ``report`` and
``export``; their names, defaults and help come from :mod:`tm_compare.options`.
"""

from __future__ import annotations

import contextlib
import sys
import warnings
from pathlib import Path

import pandas as pd

from .._deprecation import warn_renamed
from ..options import OPTIONS, default, verdict_word
from . import add_option

#: Tables ``compare`` writes, of those :meth:`ModelResults.tables` returns.
WRITTEN = ("prevalence", "differences", "influence", "cap_effect", "terms", "documents")
#: Settings of ModelResults offered as flags (``--n-boot`` for ``n_boot``).
SETTINGS = (
    "weighting",
    "cluster",
    "against",
    "n_boot",
    "ci",
    "interval",
    "resampling",
    "fdr",
    "random_state",
    "n_terms",
    "n_docs",
    "freq",
    "min_period_docs",
)
NO_CLUSTER = "document"  # --cluster document: the API's cluster=None
#: Columns of a prevalence model's effects printed by ``compare --model``.
MODEL_SHOWN = ("topic", "covariate", "value", "reference", "estimate", "ci_low", "ci_high")


def add_settings(parser) -> None:
    """One flag per setting of :class:`tm_compare.results.ModelResults`, from the options table."""
    for name in SETTINGS:
        if name == "cluster":
            choices = [c for c in OPTIONS[name].choices if c is not None] + [NO_CLUSTER]
            add_option(parser, name, choices=choices)
        elif name == "freq":
            add_option(parser, name, metavar="D|W|M|Q|Y")
        else:
            add_option(parser, name, renamed=("--weight",) if name == "weighting" else ())


def settings(args) -> dict:
    """The ModelResults settings of parsed ``args``."""
    chosen = {name: getattr(args, name) for name in SETTINGS}
    if chosen["cluster"] == NO_CLUSTER:
        chosen["cluster"] = None
    return chosen


def described(settings: dict) -> str:
    """The comparison's settings in words, as the commands print them."""
    cluster = settings["cluster"]
    resampled = "documents" if cluster is None else f"clusters of {cluster!r}"
    return (
        f"{settings['weighting']} weighting; intervals resample {resampled} "
        f"({settings['n_boot']} replicates, random_state {settings['random_state']})"
    )


@contextlib.contextmanager
def notes():
    """Print the warnings raised inside (e.g. a fallback to documents) as ``Note: ...`` lines."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield
    for note in caught:
        print(f"Note: {note.message}", file=sys.stderr)


def add_formulas(parser) -> None:
    """``--model FORMULA`` (repeatable) and ``--n-draws``, shared by compare, report, export."""
    parser.add_argument(
        "--model",
        metavar="FORMULA",
        action="append",
        default=[],
        help='also regress prevalence on covariates, e.g. "~ source * period + outlet" '
        "(columns of the corpus; repeatable)",
    )
    add_option(parser, "n_draws")


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "compare",
        help="compare topic prevalence between sources for one model of the sweep",
        description=(
            "For the model with K topics (and seed S) of the project's sweep: prevalence of "
            "every topic in every source with bootstrap intervals, differences between "
            "sources with Benjamini-Hochberg adjusted p-values, the influence check, term "
            "rankings and representative documents, written as CSV files to "
            "PROJECT/comparison/k{K}_seed{S}/ (the settings used are columns of every table). "
            "Prints the most different topics. The settings and their defaults are those of "
            "the Python API (tm_compare.results.ModelResults)."
        ),
    )
    parser.add_argument("project", metavar="PROJECT", help="project folder with a sweep")
    parser.add_argument("--k", type=int, required=True, help="number of topics of the model")
    parser.add_argument("--seed", type=int, default=0, help="seed of the model [0]")
    add_settings(parser)
    parser.add_argument(
        "--over-time",
        action="store_true",
        help="also write prevalence per source and period, and differences per period "
        "(over_time-*.csv, over_time_differences-*.csv); needs document dates",
    )
    add_formulas(parser)
    parser.add_argument(
        "--by-group",
        action="store_true",
        help="deprecated: groups are resampled by default now (--cluster group)",
    )
    parser.set_defaults(func=run)


def _load(project_path: str, k: int, seed: int):
    from ..models.sweeps import load_fit
    from ..project import Project
    from ..text.prepared import load_prepared

    project = Project.open(project_path)
    fit = load_fit(project, k, seed)
    return project, fit, load_prepared(project, fit.corpus_fingerprint)


def summary(table: pd.DataFrame, fit, n_topics: int = default("n_topics")) -> pd.DataFrame:
    """The ``n_topics`` most different topics of each comparison, for the terminal."""
    words = [" ".join(w) for w in fit.top_words(4)]
    top = table[table["rank"] <= n_topics].copy()
    top["top words"] = [words[t] for t in top["topic"]]
    top["difference (CI)"] = [
        f"{d:+.3f} ({lo:+.3f}, {hi:+.3f})"
        for d, lo, hi in top[["difference", "diff_ci_low", "diff_ci_high"]].itertuples(index=False)
    ]
    top["p adj."] = top["p_adjusted"].map("{:.3g}".format)
    top["verdict"] = top["significant"].map(verdict_word)
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
            "verdict",
        ]
    ].round(3)


def over_time_summary(made: dict) -> str:
    """One line on the tables over time, for the terminal."""
    prev = made["over_time"]
    cells = prev.drop_duplicates(["source", "period"])
    line = (
        f"Over time: {cells['period'].nunique()} periods (freq {prev['freq'].iloc[0]}); "
        f"{int(cells['few_documents'].sum())} source-periods with fewer than "
        f"{int(prev['min_period_docs'].iloc[0])} documents (not tested)"
    )
    diff = made.get("over_time_differences")
    if diff is not None:
        line += f"; {int(diff['significant'].sum())} of {len(diff)} topic-period differences stand"
    return line + "."


def deprecated_flags(args) -> None:
    """Apply ``--by-group`` (the old opt-in to groups), with a FutureWarning naming the new flag."""
    if args.by_group:
        warn_renamed("--by-group", "--cluster group (the default)", stacklevel=2)
        args.cluster = "group"


def run(args) -> int:
    from .._atomic import atomic_path
    from .._csv import to_csv
    from ..results import ModelResults

    deprecated_flags(args)
    project, fit, prepared = _load(args.project, args.k, args.seed)
    with notes():
        results = ModelResults(fit, prepared, **settings(args))
        # Prevalence models first: a bad formula stops before any table is written.
        models = [results.prevalence_model(f, n_draws=args.n_draws) for f in args.model]
        made = {
            n: t
            for n, t in results.tables(over_time=args.over_time).items()
            if n in WRITTEN or n.startswith("over_time")
        }
    s = results.settings
    suffix = f"{s['weighting']}-{s['cluster'] or NO_CLUSTER}"
    folder = Path(project.folder("comparison")) / f"k{args.k}_seed{args.seed}"
    for name, table in made.items():
        stem = name if name in ("terms", "documents") else f"{name}-{suffix}"
        with atomic_path(folder / f"{stem}.csv") as tmp:
            to_csv(table, tmp)
    heavy = made.get("influence")  # none when documents are resampled
    for row in [] if heavy is None else heavy[heavy["flagged"]].itertuples(index=False):
        print(
            f"Note: group {row.group!r} carries {row.share:.0%} of {row.source!r} "
            f"({s['weighting']} weighting).",
            file=sys.stderr,
        )
    print(f"Model k={args.k}, seed={args.seed}; {described(s)}.")
    if "differences" not in made:
        print("One source only: no differences to show.")
    else:
        print(summary(made["differences"], fit).to_string(index=False))
    if args.over_time:
        print(over_time_summary(made))
    for number, model in enumerate(models, start=1):
        for name, table in model.tables().items():
            with atomic_path(folder / f"{name}-{number}-{suffix}.csv") as tmp:
                to_csv(table, tmp)
        clear = model.effects[model.effects["p_adjusted"] <= s["fdr"]]
        print(
            f"Model {number} {model.formula!r}: {len(clear)} of {len(model.effects)} effects "
            f"stand (adjusted p <= {s['fdr']}); {model.settings['n_draws']} draws, clusters of "
            f"{model.settings['cluster']!r}."
        )
        if len(clear):
            shown = clear.sort_values("p_adjusted").head(default("n_topics"))
            print(shown[[*MODEL_SHOWN, "p_adjusted"]].round(3).to_string(index=False))
    print(f"Wrote {len(made) + 3 * len(models)} tables to {folder}")
    return 0
