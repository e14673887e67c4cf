"""``tm-compare sweep PROJECT --k 5:40:5 --seeds 3``: fit and score LDA over a grid."""

from __future__ import annotations

import argparse

from .._validation import check_limit
from ..errors import SettingsError
from ..models.fits import SETTINGS
from ..options import default
from . import add_option

#: Options of the sweep given on the command line under their Python names.
SWEEP_OPTIONS = ("k", "seeds", "engine", "holdout", "holdout_random_state", "n_terms", *SETTINGS)


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "sweep",
        help="fit LDA for every topic count and seed, score the fits and propose a k",
        description=(
            "Fit LDA on the project's prepared corpus for every k and seed, save each fit in "
            "PROJECT/fits as it finishes (a rerun skips finished fits), score every fit "
            "(coherence, held-out perplexity, stability across seeds, diversity), save the "
            "tables to PROJECT/scores and print them with the proposed k and its rule. "
            "Flags are the Python API's parameters with dashes (e.g. --n-terms for n_terms), "
            "except --jobs, which is n_jobs."
        ),
    )
    parser.add_argument("project", metavar="PROJECT", help="project folder with a prepared corpus")
    k_default = default("k")
    add_option(
        parser,
        "k",
        type=k_grid,
        default=list(k_default),
        metavar="GRID",
        help="topic counts: START:STOP:STEP with STOP included, or a list such as 5,10,20 "
        f"[{k_default[0]}:{k_default[-1]}:{k_default[1] - k_default[0]}]",
    )
    add_option(parser, "seeds", type=seed_list, metavar="N|LIST")
    add_option(parser, "engine")
    add_option(
        parser,
        "n_jobs",
        "--jobs",
        type=int,
        default=-1,
        metavar="N",
        help="worker processes on this machine, -1 for all cores (n_jobs in the Python API, "
        "where the default is 1) [-1]",
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
    for name in SETTINGS:
        add_option(fits, name, **_TYPES.get(name, {}))
    add_option(fits, "holdout")
    add_option(fits, "holdout_random_state")
    scores = parser.add_argument_group("scores (defaults in brackets)")
    add_option(scores, "n_terms", renamed=("--topn",))
    add_option(scores, "measure", help="coherence measure the proposal maximises [%(default)s]")
    parser.add_argument("--no-progress", action="store_true", help="hide the progress bar")
    parser.set_defaults(func=run)


def chunk_size(text: str) -> str | int:
    """Documents per online update: ``auto`` (ten updates per pass) or an integer >= 1."""
    if text == "auto":
        return text
    try:
        return int(text)
    except ValueError:
        msg = f"got {text!r}; give 'auto' (ten updates per pass) or an integer >= 1"
        raise argparse.ArgumentTypeError(msg) from None


def prior(text: str) -> str | float:
    """A Dirichlet prior: ``symmetric`` (1/k) or a number > 0."""
    if text == "symmetric":
        return text
    try:
        return float(text)
    except ValueError:
        msg = f"got {text!r}; give 'symmetric' (1/k) or a number > 0"
        raise argparse.ArgumentTypeError(msg) from None


def k_grid(text: str) -> list[int]:
    """``"5:40:5"`` -> 5, 10, ..., 40 (stop included); ``"5,10,20"`` -> those."""
    try:
        if ":" in text:
            parts = [int(p) for p in text.split(":")]
            if len(parts) not in (2, 3) or (len(parts) == 3 and parts[2] < 1):
                raise ValueError
            start, stop, step = (*parts, 1) if len(parts) == 2 else parts
            grid = range(start, stop + 1, step)
            try:
                check_limit("sweep", "k", len(grid), "fits")  # before a huge list is built
            except SettingsError as exc:
                raise argparse.ArgumentTypeError(str(exc)) from None
            return list(grid)
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


_TYPES = {
    "alpha": {"type": prior, "metavar": "PRIOR"},
    "eta": {"type": prior, "metavar": "PRIOR"},
    "chunksize": {"type": chunk_size, "metavar": "auto|N"},
}


def run(args) -> int:
    from ..models.sweep_summary import summary
    from ..models.sweeps import sweep
    from ..project import Project
    from ..text.prepared import load_prepared

    project = Project.open(args.project)
    prepared = load_prepared(project, args.prepared)
    result = sweep(
        prepared,
        project=project,
        n_jobs=args.n_jobs,
        scheduler=args.scheduler,
        fallback_local=args.fallback_local,
        progress=not args.no_progress,
        **{name: getattr(args, name) for name in SWEEP_OPTIONS},
    )
    print(summary(result, args.measure))
    print()
    print(
        f"Fits saved in {project.path / 'fits'}; score tables (CSV, Parquet) in "
        f"{project.path / 'scores'}"
    )
    return 0
