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

from .._deprecation import warn_renamed
from ..errors import TmCompareError
from ..options import OPTIONS, cli_help

# Order here is the order in ``tm-compare --help``.
COMMANDS = ("demo", "prepare", "sweep", "compare", "infer", "labels", "report", "export")


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


def add_option(parser, name: str, *flags: str, renamed=(), **overrides) -> None:
    """Add the flag of option ``name`` of :mod:`tm_compare.options`, with its default, choices
    and help (:func:`~tm_compare.options.cli_help`); ``overrides`` are argparse's keywords.

    ``flags`` default to ``--name-with-dashes``; ``renamed`` are old spellings that keep working
    with a FutureWarning naming the new one.
    """
    option = OPTIONS[name]
    flags = flags or ("--" + name.replace("_", "-"),)
    settings = {"dest": name, "default": option.default, "help": cli_help(name)}
    if option.choices is not None:
        settings["choices"] = [c for c in option.choices if c is not None]
    elif type(option.default) in (int, float):
        kind = type(option.default)
        settings.update(type=kind, metavar="N" if kind is int else "X")
    settings.update(overrides)
    parser.add_argument(*flags, **settings)
    for old in renamed:
        kept = {k: v for k, v in settings.items() if k in ("type", "choices", "metavar")}
        parser.add_argument(
            old,
            dest=name,
            action=_Renamed,
            new=flags[0],
            default=argparse.SUPPRESS,
            help=argparse.SUPPRESS,
            **kept,
        )


class _Renamed(argparse.Action):
    """The old spelling of a flag: it still works, with a FutureWarning naming the new one."""

    def __init__(self, option_strings, dest, new: str, **kwargs):
        super().__init__(option_strings, dest, **kwargs)
        self.new = new

    def __call__(self, parser, namespace, values, option_string=None):
        warn_renamed(option_string, self.new, stacklevel=2)
        setattr(namespace, self.dest, values)


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
