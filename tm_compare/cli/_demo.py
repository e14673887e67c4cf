"""``tm-compare demo``: run the whole job on the invented Quillhaven corpus.

A thin layer over :func:`tm_compare.demo.run.run_demo`; each step's report is
printed as it finishes, then where everything is and a short summary.
"""

from __future__ import annotations

import argparse
import shlex
import time
from pathlib import Path

from ..demo.quillhaven import DEMO_LANGUAGES
from ..demo.run import DEFAULT_PROJECT, GRID, N_BOOT
from . import add_option
from ._sweep import k_grid, seed_list


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "demo",
        help="run the whole job on an invented corpus: prepare, sweep, compare, label, report",
        description=(
            "Generate an invented corpus (the coastal city of Quillhaven, its outlets and a "
            "reader panel; articles they shared and articles they visited), then run the whole "
            "job on it in a project folder: prepare the text, fit LDA for several k and seeds, "
            "score the fits and pick k, compare the sources, add labels from two invented "
            "analysts with their agreement, and write the HTML report and the exports. Nothing "
            "in it is real. Running it again reuses the folder: finished fits and settled labels "
            "are kept."
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
    add_option(
        parser,
        "random_state",
        renamed=("--seed",),
        metavar="S",
        help="seed of the invented corpus: the same seed gives the same corpus",
    )
    parser.add_argument(
        "--language",
        choices=DEMO_LANGUAGES,
        default="en",
        help="language of the invented articles; de+en mixes German and English articles, "
        "detects each one's language and reports the mix",
    )
    grid = parser.add_argument_group("sweep and comparison (smaller is faster)")
    grid.add_argument(
        "--k",
        type=k_grid,
        default=list(GRID["k"]),
        metavar="GRID",
        help="topic counts: START:STOP:STEP (STOP included) or a list such as 6,8,10",
    )
    grid.add_argument(
        "--seeds",
        type=seed_list,
        default=GRID["seeds"],
        metavar="N|LIST",
        help="fits per k: a number of seeds or a list of seeds",
    )
    grid.add_argument(
        "--passes",
        type=int,
        default=GRID["passes"],
        help="most passes over the corpus per fit (a fit stops once its topics settle) "
        f"[{GRID['passes']}]",
    )
    grid.add_argument(
        "--n-boot", type=int, default=N_BOOT, help="bootstrap replicates of the comparison"
    )
    parser.add_argument("--no-progress", action="store_true", help="hide progress bars")
    parser.set_defaults(func=run)


def open_views_command(notebook) -> str:
    """The shell command that opens the demo's views notebook in JupyterLab."""
    folder = Path(notebook).resolve().parent
    try:
        shown = folder.relative_to(Path.cwd())
    except ValueError:
        shown = folder
    return f"cd {shlex.quote(str(shown))} && jupyter lab {shlex.quote(Path(notebook).name)}"


def run(args) -> int:
    from ..demo.quillhaven import _check
    from ..demo.run import STEPS, run_demo, summary

    _check("run_demo", args.docs, args.random_state)  # before anything is printed or made
    started = time.perf_counter()
    total = len(STEPS)
    done = iter(range(1, total + 1))

    def section(title: str, report: str) -> None:
        elapsed = time.perf_counter() - started
        print(f"\n== [{next(done)}/{total}] {title} ({elapsed:.0f} s) ==\n{report}", flush=True)

    print(f"Running the demo job in {args.project!r}: {total} steps.", flush=True)
    result = run_demo(
        args.project,
        n_docs=args.docs,
        random_state=args.random_state,
        echo=section,
        k=args.k,
        seeds=args.seeds,
        passes=args.passes,
        n_boot=args.n_boot,
        progress=not args.no_progress,
        language=args.language,
    )
    folder = result.project.path.resolve()
    print(f"\n== Summary ({time.perf_counter() - started:.0f} s in all) ==")
    print(summary(result))
    print(
        f"\nProject folder: {folder}\n"
        f"  report:  {result.report_path.resolve()}  (open it in a browser; it needs no network)\n"
        f"  exports: {result.report_path.parent.resolve()}  (CSV, Parquet, PNG, SVG; columns.md)\n"
        f"  labels:  {folder / 'labels.sqlite'}\n"
        f"Next: open the views in JupyterLab (needs pip install 'tm_compare[notebook]'):\n"
        f"  {open_views_command(result.views_path)}\n"
        f"or, in a notebook of your own: %load_ext tm_compare then %tm_compare {shlex.quote(str(folder))}\n"
        f"or rerun with other settings:\n"
        f"  tm-compare report {args.project} --k K --seed S --out report-kK.html"
    )
    return 0
