"""``tm-compare sweep PROJECT --k 5:40:5 --seeds 3``: fit and score LDA over a grid."""

from __future__ import annotations

import argparse

SHOWN = [
    "k",
    "seed",
    "npmi",
    "c_v",
    "uci",
    "umass",
    "perplexity",
    "stability",
    "diversity",
    "fit_seconds",
]


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "sweep",
        help="fit LDA for every topic count and seed, score the fits and propose a k",
        description=(
            "Fit LDA on the project's prepared corpus for every k and seed, save each fit in "
            "PROJECT/fits as it finishes (a rerun skips finished fits), score every fit "
            "(coherence, held-out perplexity, stability across seeds, diversity), save the "
            "tables to PROJECT/scores and print them with the proposed k and its rule."
        ),
    )
    parser.add_argument("project", metavar="PROJECT", help="project folder with a prepared corpus")
    parser.add_argument(
        "--k",
        type=k_grid,
        default=k_grid("5:40:5"),
        metavar="GRID",
        help="topic counts: START:STOP:STEP with STOP included, or a list such as 5,10,20 [5:40:5]",
    )
    parser.add_argument(
        "--seeds",
        type=seed_list,
        default=3,
        metavar="N|LIST",
        help="a number of seeds (3 means 0,1,2) or a list such as 0,4,9 [3]",
    )
    parser.add_argument(
        "--engine",
        choices=("gensim", "sklearn"),
        default="gensim",
        help="LDA implementation [gensim]",
    )
    parser.add_argument(
        "--jobs",
        type=int,
        default=-1,
        metavar="N",
        help="worker processes on this machine, -1 for all cores [-1]",
    )
    parser.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="run the fits on the Dask cluster at ADDRESS (tcp://HOST:PORT)",
    )
    parser.add_argument(
        "--fallback-local",
        action="store_true",
        help="fit on this machine if the scheduler does not answer",
    )
    parser.add_argument(
        "--prepared", metavar="KEY", help="folder name under PROJECT/prepared [the most recent]"
    )
    fits = parser.add_argument_group("fit settings (defaults in brackets)")
    fits.add_argument("--passes", type=int, default=10, help="passes over the corpus [10]")
    fits.add_argument(
        "--iterations", type=int, default=50, help="inference iterations per document [50]"
    )
    fits.add_argument(
        "--holdout",
        type=float,
        default=0.1,
        help="share of documents held out for perplexity [0.1]",
    )
    fits.add_argument("--topn", type=int, default=10, help="top words per topic for scores [10]")
    fits.add_argument(
        "--measure",
        default="npmi",
        choices=("npmi", "c_v", "uci", "umass"),
        help="coherence measure the proposal maximises [npmi]",
    )
    parser.add_argument("--no-progress", action="store_true", help="hide the progress bar")
    parser.set_defaults(func=run)


def k_grid(text: str) -> list[int]:
    """``"5:40:5"`` -> 5, 10, ..., 40 (stop included); ``"5,10,20"`` -> those."""
    try:
        if ":" in text:
            parts = [int(p) for p in text.split(":")]
            if len(parts) not in (2, 3) or (len(parts) == 3 and parts[2] < 1):
                raise ValueError
            start, stop, step = (*parts, 1) if len(parts) == 2 else parts
            return list(range(start, stop + 1, step))
        return [int(p) for p in text.split(",")]
    except ValueError:
        msg = (
            f"--k got {text!r}; give START:STOP:STEP (e.g. 5:40:5, STOP included, STEP >= 1) "
            "or a comma-separated list (e.g. 5,10,20)"
        )
        raise argparse.ArgumentTypeError(msg) from None


def seed_list(text: str) -> int | list[int]:
    try:
        return [int(p) for p in text.split(",")] if "," in text else int(text)
    except ValueError:
        msg = f"--seeds got {text!r}; give a number of seeds (e.g. 3) or a list (e.g. 0,4,9)"
        raise argparse.ArgumentTypeError(msg) from None


def run(args) -> int:
    from ..models.sweeps import sweep
    from ..project import Project
    from ..text.prepared import load_prepared

    project = Project.open(args.project)
    prepared = load_prepared(project, args.prepared)
    result = sweep(
        prepared,
        k=args.k,
        seeds=args.seeds,
        engine=args.engine,
        project=project,
        n_jobs=args.jobs,
        scheduler=args.scheduler,
        fallback_local=args.fallback_local,
        passes=args.passes,
        iterations=args.iterations,
        holdout=args.holdout,
        topn=args.topn,
        progress=not args.no_progress,
    )
    shown = [c for c in SHOWN if c in result.scores.columns]
    print(f"Scores of {len(result.scores)} fits ({args.engine}), one row per fit:")
    print(result.scores[shown].to_string(index=False, float_format=lambda x: f"{x:.4g}"))
    print()
    print(f"Proposed: {result.recommend(measure=args.measure).rule}")
    print()
    print(
        f"Fits saved in {project.path / 'fits'}; score tables (CSV, Parquet) in "
        f"{project.path / 'scores'}"
    )
    return 0
