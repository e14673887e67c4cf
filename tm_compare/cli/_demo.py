"""``tm-compare demo``: build the invented Quillhaven project and run the job on it.

A thin layer over :func:`tm_compare.pipeline.run_demo`; each step's report is
printed as it finishes.
"""

from __future__ import annotations

import argparse

from ..pipeline import DEFAULT_PROJECT


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "demo",
        help="build the invented Quillhaven demo project and prepare it",
        description=(
            "Generate an invented corpus (the coastal city of Quillhaven, its outlets and a "
            "reader panel; articles they shared and articles they visited), save it in a "
            "project folder, prepare it for LDA, and print what each step found. Nothing in "
            "it is real. Running it again reuses the folder and its cache."
        ),
        formatter_class=argparse.ArgumentDefaultsHelpFormatter,
    )
    parser.add_argument("--project", default=DEFAULT_PROJECT, metavar="DIR", help="project folder")
    parser.add_argument(
        "--docs",
        type=int,
        default=3000,
        metavar="N",
        help="number of articles (at least 200; up to 200,000 for benchmarks)",
    )
    parser.add_argument(
        "--seed",
        type=int,
        default=0,
        metavar="S",
        help="random seed: the same seed gives the same corpus",
    )
    parser.set_defaults(func=run)


def _section(title: str, report: str) -> None:
    print(f"\n== {title} ==\n{report}", flush=True)


def run(args) -> int:
    from ..pipeline import run_demo

    result = run_demo(args.project, n_docs=args.docs, seed=args.seed, echo=_section)
    print(f"\nProject folder: {result.project.path.resolve()}")
    return 0
