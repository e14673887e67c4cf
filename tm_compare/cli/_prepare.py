"""``tm-compare prepare CORPUS_FILE --text COL --source COL --project DIR``: intake + preparation."""

from __future__ import annotations

import time

from ..text.corpus import CONFLICT_RULES
from ..text.prepared import DEFAULTS
from . import add_option


def language_arg(text: str):
    """``de``, ``auto`` or ``de,fr`` (detect among these) as :func:`tm_compare.prepare` takes it."""
    codes = [c.strip() for c in text.split(",") if c.strip()]
    return codes[0] if len(codes) == 1 else codes


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "prepare",
        help="read a corpus file and prepare it for topic models, in a project folder",
        description=(
            "Read CORPUS_FILE (CSV, TSV, Parquet or JSON Lines), save it in the project, prepare "
            "its text (boilerplate, near-duplicates, tokens, phrases, vocabulary) and print what "
            "intake and preparation removed or merged. A second run with the same corpus and "
            "settings reads the prepared corpus from the project's cache."
        ),
    )
    parser.add_argument("corpus_file", metavar="CORPUS_FILE", help="the corpus file")
    parser.add_argument("--project", required=True, metavar="DIR", help="project folder")
    parser.add_argument("--text", required=True, metavar="COL", help="column of article texts")
    parser.add_argument("--source", required=True, metavar="COL", help="column naming the source")
    parser.add_argument(
        "--date-format",
        metavar="FORMAT",
        help="how the dates are written, e.g. %%d/%%m/%%Y [ISO 8601, else read value by value]",
    )
    for role, what in (
        ("id", "document ids"),
        ("weight", "exposure counts"),
        ("group", "who produced the exposure (reader, outlet)"),
        ("url", "article URLs"),
        ("title", "titles"),
        ("date", "dates"),
    ):
        parser.add_argument(f"--{role}", metavar="COL", help=f"column of {what}")
    parser.add_argument(
        "--encoding",
        metavar="NAME",
        help="text encoding of a CSV/TSV/JSON Lines file, e.g. cp1252 or latin-1 [utf-8]",
    )
    parser.add_argument(
        "--on-conflict",
        choices=CONFLICT_RULES,
        default="error",
        help="when one id has different texts within a source: stop with an error naming the "
        "ids, or keep the first or the longest text [%(default)s]",
    )
    knobs = parser.add_argument_group("preparation settings (defaults in brackets)")
    add_option(knobs, "language", type=language_arg, metavar="CODE")
    add_option(knobs, "undetected", metavar="remove|CODE")
    knobs.add_argument(
        "--stop-words",
        metavar="FILE",
        help="extra stop words, one per line, added to the built-in list of each language",
    )
    knobs.add_argument(
        "--stem", action="store_true", help="Snowball stemming in each document's language [off]"
    )
    knobs.add_argument(
        "--lemmas",
        action="store_true",
        help="dictionary forms instead of stems (needs tm_compare[lemmas]) [off]",
    )
    knobs.add_argument(
        "--keep-numbers", action="store_true", help="keep tokens with digits [dropped]"
    )
    knobs.add_argument(
        "--ngrams",
        type=int,
        choices=(1, 2, 3),
        default=DEFAULTS["ngrams"],
        help="1 none, 2 bigrams, 3 trigrams [%(default)s]",
    )
    knobs.add_argument("--no-boilerplate", action="store_true", help="keep boilerplate lines")
    knobs.add_argument(
        "--no-near-duplicates", action="store_true", help="skip near-duplicate detection"
    )
    for name, kind in (
        ("near_duplicate_threshold", float),
        ("boilerplate_min_share", float),
        ("boilerplate_min_docs", int),
        ("phrase_min_count", int),
        ("phrase_threshold", float),
        ("min_doc_count", int),
        ("max_doc_fraction", float),
        ("max_vocab", int),
        ("min_doc_tokens", int),
    ):
        knobs.add_argument(
            "--" + name.replace("_", "-"),
            type=kind,
            default=DEFAULTS[name],
            metavar=kind.__name__.upper(),
            help="[%(default)s]",
        )
    parser.set_defaults(func=run)


def settings_from_args(args) -> dict:
    """The keyword arguments of :func:`tm_compare.prepare` given on the command line."""
    settings = {
        name: getattr(args, name)
        for name in (
            "ngrams",
            "near_duplicate_threshold",
            "boilerplate_min_share",
            "boilerplate_min_docs",
            "phrase_min_count",
            "phrase_threshold",
            "min_doc_count",
            "max_doc_fraction",
            "max_vocab",
            "min_doc_tokens",
        )
    }
    settings["stem"] = "lemma" if args.lemmas else "snowball" if args.stem else None
    settings["language"] = args.language
    settings["undetected"] = args.undetected
    settings["drop_numbers"] = not args.keep_numbers
    settings["boilerplate"] = not args.no_boilerplate
    if args.no_near_duplicates:
        settings["near_duplicates"] = None
    if args.stop_words:
        from ..text._stopwords import read_stop_words

        settings["extra_stop_words"] = read_stop_words(args.stop_words)
    return settings


def run(args) -> int:
    from ..project import Project
    from ..text.corpus import Corpus, save_corpus
    from ..text.prepared import prepare

    columns = {"text": args.text, "source": args.source, "date_format": args.date_format}
    columns.update(
        {
            r: getattr(args, r)
            for r in ("id", "weight", "group", "url", "title", "date")
            if getattr(args, r) is not None
        }
    )
    corpus = Corpus.read(
        args.corpus_file, encoding=args.encoding, on_conflict=args.on_conflict, **columns
    )
    project = Project.create(args.project)
    save_corpus(corpus, project)
    start = time.perf_counter()
    prepared = prepare(corpus, project=project, **settings_from_args(args))
    seconds = time.perf_counter() - start
    state = (
        "read from the project cache"
        if prepared.from_cache
        else f"computed in {seconds:.1f} s, {len(corpus) / seconds:,.0f} documents/s, and cached"
    )
    print(f"Corpus: {corpus!r}")
    print(f"Prepared ({state}): {prepared!r}")
    print()
    print("What intake and preparation removed or merged:")
    print(prepared.report)
    if args.language == "auto" or isinstance(args.language, list):
        print()
        print("Languages per source (documents kept; 'und': language not detected):")
        print(prepared.language_mix().to_string(index=False))
    if len(prepared.boilerplate):
        print()
        print("Boilerplate lines removed (documents per line):")
        print(prepared.boilerplate[["group", "documents", "line"]].to_string(index=False))
    print()
    print(f"Saved in {project.path}")
    return 0
