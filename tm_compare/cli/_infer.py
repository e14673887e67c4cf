"""``tm-compare infer PROJECT NEW_FILE``: topic shares of new articles under one model of the sweep.

A thin layer over :func:`tm_compare.models.inference.infer`: the new texts are prepared with the
training corpus's settings and vocabulary, their shares inferred with the model's own engine,
and two CSV files written to ``PROJECT/inferred/``: the shares (one row per document, joinable
on ``id``) and the report (every document: words known and dropped, near-duplicates, status).
"""

from __future__ import annotations

from pathlib import Path

from ..options import default


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "infer",
        help="topic shares of new articles under one model of the sweep, without refitting",
        description=(
            "Read NEW_FILE (CSV, TSV, Parquet or JSON Lines), prepare its texts with the "
            "preparation settings and vocabulary of the model's training corpus (words outside "
            "the vocabulary are dropped and counted; near-copies of training documents are "
            "flagged), infer topic shares with the model's own engine, and write "
            "PROJECT/inferred/{NAME}-k{K}_seed{S}.csv (shares) and ...-report.csv."
        ),
    )
    parser.add_argument("project", metavar="PROJECT", help="project folder with a sweep")
    parser.add_argument("new_file", metavar="NEW_FILE", help="file of new articles")
    parser.add_argument("--k", type=int, help="number of topics of the model [recommended]")
    parser.add_argument("--seed", type=int, help="seed of the model [0, or the recommended]")
    parser.add_argument("--text", default="text", metavar="COL", help="column of texts [text]")
    parser.add_argument("--source", default="source", metavar="COL", help="column of sources")
    parser.add_argument(
        "--as-source",
        metavar="NAME",
        help="one source name for every new article (replaces or stands in for --source)",
    )
    for role, what in (
        ("id", "document ids"),
        ("weight", "exposure counts"),
        ("group", "readers"),
        ("date", "dates"),
    ):
        parser.add_argument(f"--{role}", metavar="COL", help=f"column of {what}")
    parser.add_argument(
        "--random-state",
        type=int,
        default=None,
        metavar="N",
        help="seed of the inference's random start [the model's seed]",
    )
    parser.add_argument(
        "--out", metavar="FILE", help="where to write the shares [PROJECT/inferred/...]"
    )
    parser.set_defaults(func=run)


def run(args) -> int:
    from .._atomic import atomic_path
    from ..models.inference import infer
    from ..models.sweeps import load_fit
    from ..project import Project
    from ..text import _intake
    from ..text.corpus import Corpus
    from ..text.prepared import load_prepared
    from ._compare import notes

    project = Project.open(args.project)
    fit = load_fit(project, args.k, args.seed)
    prepared = load_prepared(project, fit.corpus_fingerprint)
    path = Path(args.new_file)
    roles = {r: getattr(args, r) for r in ("id", "weight", "group", "date")}
    strings = [c for c in (args.id, args.group, args.source) if c]
    frame = _intake.read_table(path, _intake.infer_format(path), None, strings)
    source = args.source
    if args.as_source is not None:
        frame = frame.assign(**{"source": args.as_source})
        source = "source"
    corpus = Corpus.from_frame(
        frame, text=args.text, source=source, origin=f"the file {str(path)!r}", **roles
    )
    with notes():  # documents with no known word: a Note line, not a traceback
        new = infer(fit, prepared, corpus, random_state=args.random_state)
    stem = f"{path.name.split('.')[0]}-k{fit.k}_seed{fit.random_state}"
    target = Path(args.out) if args.out else Path(project.folder("inferred")) / f"{stem}.csv"
    report = target.with_name(target.stem + "-report.csv")
    with atomic_path(target) as tmp:
        new.frame.to_csv(tmp, index=False)
    with atomic_path(report) as tmp:
        new.report.to_csv(tmp, index=False)
    print(f"Model k={fit.k}, seed={fit.random_state}: {new.summary()}.")
    if len(new.unknown_words):
        top = ", ".join(f"{w} ({n})" for w, n in new.unknown_words.head(default("n_terms")).items())
        print(f"Most frequent words outside the vocabulary: {top}")
    print(f"Wrote {target} and {report}")
    return 0
