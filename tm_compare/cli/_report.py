"""``tm-compare report PROJECT``: one self-contained HTML report of a model of the sweep."""

from __future__ import annotations

from ._compare import add_formulas, add_settings, described, notes, settings


def add_model_options(parser) -> None:
    """The project, ``--k``, ``--seed`` and the comparison's settings, shared by ``report``
    and ``export``."""
    parser.add_argument("project", metavar="PROJECT", help="project folder with a sweep")
    parser.add_argument(
        "--k",
        type=int,
        metavar="K",
        help="number of topics of the model (default: the k the sweep recommends)",
    )
    parser.add_argument(
        "--seed",
        type=int,
        metavar="S",
        help="seed of the model (default: the recommended seed, or 0 with --k)",
    )
    add_settings(parser)
    add_formulas(parser)


def collect_results(args):
    """The :class:`tm_compare.report.exports.Results` the flags ask for; fallbacks as notes."""
    from ..report.exports import collect

    with notes():
        return collect(
            args.project,
            args.k,
            args.seed,
            formulas=args.model,
            n_draws=args.n_draws,
            **settings(args),
        )


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "report",
        help="write a self-contained HTML report of one model (charts inline, no network)",
        description=(
            "Write one HTML file that a reader who has never seen the tool can follow: the "
            "documents and what was removed, how k was chosen, the topics, the comparison "
            "between sources with intervals, adjusted p-values and the influence check, "
            "representative documents, label agreement, settings and package versions to "
            "reproduce it, and cautions. Charts are inline SVG; the file needs no network and "
            "runs no script."
        ),
    )
    add_model_options(parser)
    parser.add_argument(
        "--out",
        metavar="FILE",
        help="where to write the report [PROJECT/report/report.html]",
    )
    parser.set_defaults(func=run)


def run(args) -> int:
    from ..report.html import write_report
    from . import check_out_file

    check_out_file(args.out, "--out", "report.html")
    results = collect_results(args)
    path = write_report(results.project, out=args.out, results=results)
    print(
        f"Report of the model k={results.fit.k}, seed {results.fit.random_state} "
        f"({described(results.settings)}): {path}"
    )
    return 0
