"""``tm-compare export PROJECT``: tables as CSV/Parquet and charts as PNG/SVG, offline."""

from __future__ import annotations

import argparse

from ..report.exports import CHART_FORMATS, TABLE_FORMATS
from ._compare import described
from ._report import add_model_options, collect_results


def _formats(accepted: tuple[str, ...]):
    def parse(text: str) -> list[str]:
        items = [t.strip().lower() for t in text.split(",") if t.strip()]
        if text.strip().lower() == "none":
            return []
        wrong = [t for t in items if t not in accepted]
        if wrong or not items:
            msg = (
                f"got {text!r}; give a comma-separated list of {', '.join(accepted)} "
                "(or 'none' to skip)"
            )
            raise argparse.ArgumentTypeError(msg)
        return items

    return parse


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "export",
        help="export tables (CSV, Parquet) and charts (PNG, SVG) of one model",
        description=(
            "Write the tables of one model of the sweep (scores, topic scores, prevalence, "
            "differences, influence, term rankings, representative documents, each document's "
            "topic shares with your ids and metadata, labels, agreement, removals) as CSV and "
            "Parquet with a data dictionary (columns.md), and its charts as PNG and SVG "
            "(charts/). Works offline."
        ),
    )
    add_model_options(parser)
    parser.add_argument(
        "--charts",
        type=_formats(CHART_FORMATS),
        default=list(CHART_FORMATS),
        metavar="LIST",
        help="chart formats: png,svg, one of them, or none [png,svg]",
    )
    parser.add_argument(
        "--tables",
        type=_formats(TABLE_FORMATS),
        default=list(TABLE_FORMATS),
        metavar="LIST",
        help="table formats: csv,parquet, one of them, or none [csv,parquet]",
    )
    parser.add_argument("--out", metavar="DIR", help="folder to write to [PROJECT/report]")
    parser.set_defaults(func=run)


def run(args) -> int:
    from ..report.exports import export

    results = collect_results(args)
    written = export(
        results.project, charts=args.charts, tables=args.tables, out=args.out, results=results
    )
    folders = sorted({str(p.parent) for p in written})
    print(
        f"Exported {len(written)} files of the model k={results.fit.k}, seed {results.fit.random_state} "
        f"({described(results.settings)}) to {', '.join(folders) or 'nowhere (nothing asked for)'}"
    )
    return 0
