"""``tm-compare labels PROJECT list|export|import|agreement|categories``: a thin layer over
LabelStore."""

from __future__ import annotations

import argparse
import sys

import pandas as pd

from .._deprecation import warn_renamed
from ..errors import LabelStoreError
from ..labels._schema import LABEL_FIELDS
from ..labels.agreement import can_compute, explain_agreement
from ..models.sweeps import load_fit
from ..project import Project

ACTIONS = ("list", "export", "import", "agreement", "categories")


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "labels",
        help="list, export, import topic labels, report coder agreement, edit the categories",
        description=(
            "Work with a project's topic labels. The store is PROJECT/labels.sqlite unless "
            "--store gives another (e.g. a PostgreSQL URL). Pick the fit by its fingerprint "
            "(--fit; formerly --model) or by --k and --seed of the project's sweep."
        ),
    )
    parser.add_argument("project", metavar="PROJECT", help="project folder")
    parser.add_argument("action", choices=ACTIONS, help="what to do")
    parser.add_argument(
        "file", nargs="?", metavar="FILE", help="label file to import (import only)"
    )
    parser.add_argument("--fit", metavar="FINGERPRINT", help="fingerprint of the fit (the model)")
    parser.add_argument("--model", metavar="FINGERPRINT", help=argparse.SUPPRESS)  # old --fit
    parser.add_argument("--k", type=int, help="number of topics of the fit in the sweep")
    parser.add_argument("--seed", type=int, help="seed of the fit in the sweep")
    parser.add_argument(
        "--format",
        choices=("csv", "json"),
        help="output format (default: a table, or JSON for export)",
    )
    parser.add_argument("--out", metavar="FILE", help="write to FILE instead of the screen")
    parser.add_argument(
        "--store", metavar="URL", help="label store URL or path (default: PROJECT/labels.sqlite)"
    )
    parser.add_argument("--analyst", help="read as this analyst (matters during blind rounds)")
    parser.add_argument(
        "--history",
        action="store_true",
        help="list/export every version, not just the current labels",
    )
    _register_categories(parser)
    parser.set_defaults(func=run)


def _register_categories(parser) -> None:
    group = parser.add_argument_group(
        "categories",
        "The team's label categories: 'categories' alone lists them (with retired ones and "
        "former names); these options change them and need --analyst.",
    )
    group.add_argument(
        "--add", action="append", metavar="NAME", default=[], help="define a category (repeat)"
    )
    group.add_argument(
        "--description", default="", help="description of the category given with --add"
    )
    group.add_argument(
        "--rename", nargs=2, metavar=("OLD", "NEW"), help="rename a category; labels follow it"
    )
    group.add_argument("--retire", metavar="NAME", help="stop offering a category")
    group.add_argument("--restore", metavar="NAME", help="offer a retired category again")
    group.add_argument(
        "--changes", action="store_true", help="list every change to the categories instead"
    )


def _categories(store, args) -> None:
    if not (args.add or args.rename or args.retire or args.restore):
        frame = store.category_history() if args.changes else store.category_table()
        _emit(frame if args.format else frame.fillna(""), args)  # no "NaN" on screen
        return
    if store.analyst is None:
        msg = "Changing categories needs --analyst NAME (who made each change is recorded)."
        raise LabelStoreError(msg)
    if args.add:
        added = store.define_categories([(name, args.description) for name in args.add])
        print(f"Added: {', '.join(added)}." if added else "Already defined: nothing added.")
    if args.rename:
        store.rename_category(*args.rename)
        print(f"Renamed {args.rename[0]!r} to {args.rename[1]!r}; labels follow the new name.")
    if args.retire:
        store.retire_category(args.retire)
        print(f"Retired {args.retire!r}; labels that use it keep it.")
    if args.restore:
        store.restore_category(args.restore)
        print(f"Restored {args.restore!r}.")


def _fit(args):
    """The fit's fingerprint and, when the sweep is available, its top words."""
    if args.model:
        warn_renamed("--model", "--fit")
    fingerprint = args.fit or args.model
    if fingerprint and (args.k is not None or args.seed is not None):
        msg = "Give either --fit FINGERPRINT or --k K --seed S, not both."
        raise LabelStoreError(msg)
    if fingerprint:
        return fingerprint, None
    if args.k is None or args.seed is None:
        msg = "Name the fit: --fit FINGERPRINT, or --k K --seed S of the project's sweep."
        raise LabelStoreError(msg)
    fit = load_fit(Project.open(args.project), args.k, args.seed)
    return fit.fingerprint, fit.top_words()


def _printable(value):
    # Labels are stored as given; on a terminal, control characters are shown escaped.
    if not isinstance(value, str):
        return value
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in value)


def _emit(frame: pd.DataFrame, args) -> None:
    if args.format == "json":
        text = frame.to_json(orient="records", force_ascii=False, indent=2) + "\n"
    elif args.format == "csv":
        text = frame.to_csv(index=False)
    else:
        text = (
            frame.map(_printable).to_string(index=False) + "\n" if len(frame) else "(no labels)\n"
        )
    _write(text, args.out)


def _write(text: str, out) -> None:
    if out:
        from .._atomic import atomic_write_text

        atomic_write_text(out, text)
        print(f"Wrote {out}", file=sys.stderr)
    else:
        sys.stdout.write(text)


def run(args) -> int:
    from ..labels.store import LabelStore

    location = args.store or Project.open(args.project)
    if args.action == "import":
        if not args.file:
            msg = "import needs the label FILE to read: tm-compare labels PROJECT import FILE --fit FINGERPRINT"
            raise LabelStoreError(msg)
        fit, _ = _fit(args)
        with LabelStore(location, analyst=args.analyst) as store:
            counts = store.import_labels(args.file, fit=fit)
        print(
            f"Imported {counts['added']} label rows, skipped {counts['skipped']} already present."
        )
        return 0
    if args.action == "categories":
        with LabelStore(location, analyst=args.analyst) as store:
            _categories(store, args)
        return 0
    fit, top_words = _fit(args)
    with LabelStore(location, analyst=args.analyst) as store:
        if args.action == "list":
            frame = store.history(fit) if args.history else store.current(fit)
            shown = ["topic", "analyst", "version", *LABEL_FIELDS]
            _emit(frame if args.format else frame[shown], args)
        elif args.action == "agreement":
            table = store.agreement(fit)
            # On screen: a sentence per field, and figures only where alpha exists.
            if not (args.format or args.out):
                overall = table[table["scope"] == "overall"].to_dict("records")
                lines = [explain_agreement(row) for row in overall]
                _write("\n".join(lines) + "\n", None)
                if any(map(can_compute, overall)):
                    _emit(table[table["n_coders"] >= 2], args)
            else:
                _emit(table, args)
        else:
            fmt = args.format or "json"
            text = store.export_text(fit, format=fmt, history=args.history, top_words=top_words)
            _write(text + "\n" if fmt == "json" else text, args.out)
    return 0
