"""The ``tm-compare`` command: a thin layer over the Python API.

Each sub-command lives in its own module ``tm_compare.cli._NAME`` with two
functions: ``register(subparsers)`` adds its parser, and the parser's
``func`` default runs it and returns an exit code. Errors raised on purpose
(:class:`tm_compare.errors.TmCompareError`) print as one line ``Error: ...``
with exit code 1; ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import argparse
import importlib
import sys
import traceback

from ..errors import TmCompareError

# Order here is the order in ``tm-compare --help``.
COMMANDS = ("demo", "prepare", "sweep", "compare", "labels", "report", "export")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="tm-compare",
        description=(
            "Compare the topics of news sources with LDA: prepare a corpus, sweep topic counts "
            "and seeds, compare sources with honest uncertainty, label topics as a team, and "
            "report. Every command works on a project folder."
        ),
    )
    parser.add_argument("--debug", action="store_true", help="show full tracebacks on errors")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name in COMMANDS:
        importlib.import_module(f"{__name__}._{name}").register(subparsers)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except (TmCompareError, OSError) as exc:
        if args.debug:
            traceback.print_exc()
        else:
            print(f"Error: {exc} (run again with --debug for the traceback)", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("Interrupted.", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
