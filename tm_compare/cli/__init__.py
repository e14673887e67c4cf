"""The ``tm-compare`` command: a thin layer over the Python API.

Each sub-command lives in its own module ``tm_compare.cli._NAME`` with two
functions: ``register(subparsers)`` adds its parser, and the parser's
``func`` default runs it and returns an exit code. Every failure ends the
same way: one line ``Error: ...`` on standard error and exit code 1 -- errors raised on purpose
(:class:`tm_compare.errors.TmCompareError`), usage errors (the parser raises
:class:`~tm_compare.errors.UsageError` instead of printing its own format), and file-system
errors. Anything else is a bug and says so on its one line. ``--debug`` anywhere on the command
line shows the traceback instead.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import traceback

from .._deprecation import warn_renamed
from ..errors import TmCompareError, UsageError
from ..options import OPTIONS, cli_help

# Order here is the order in ``tm-compare --help``.
COMMANDS = ("demo", "prepare", "sweep", "compare", "infer", "labels", "report", "export")


class Parser(argparse.ArgumentParser):
    """argparse with its errors raised as :class:`UsageError`, so they end as one line, exit 1
    (argparse itself prints the usage block and exits 2). Sub-parsers inherit the class."""

    def error(self, message: str):
        msg = f"{self.prog}: {message.rstrip('.')}. See `{self.prog} --help` for what is accepted."
        raise UsageError(msg)


def build_parser() -> argparse.ArgumentParser:
    parser = Parser(
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


def check_out_file(path, flag: str, example: str) -> None:
    """Refuse an output file path that names an existing folder, before any work starts."""
    if path is not None and os.path.isdir(path):
        msg = (
            f"{flag} {str(path)!r} is a folder; {flag} takes the path of a file to write, "
            f"e.g. {os.path.join(str(path), example)!r}."
        )
        raise UsageError(msg)


def _one_line(exc: BaseException) -> str:
    """The ``Error: ...`` line of ``exc``: its message on one line."""
    if isinstance(exc, TmCompareError):
        text = str(exc)
    elif isinstance(exc, OSError):
        where = f" {str(exc.filename)!r}" if exc.filename is not None else ""
        reason = exc.strerror or str(exc)
        text = (
            f"Cannot read or write{where}: {reason}. Check that the path exists, that you may "
            "read and write it, and that the disk has space."
        )
    else:
        text = (
            f"unexpected failure ({type(exc).__name__}: {exc}). This is a bug in tm_compare, "
            "not in your input: please report it with the traceback of --debug."
        )
    return "Error: " + " ".join(text.split()) + " (run again with --debug for the traceback)"


def _warning_line(message, category, filename, lineno, file=None, line=None):
    return f"Note: {' '.join(str(message).split())}\n"


def main(argv: list[str] | None = None) -> int:
    """Run the command line ``argv`` (default ``sys.argv[1:]``); return the exit code."""
    argv = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in argv
    if debug:  # --debug anywhere on the line, before or after the command
        argv = ["--debug", *(a for a in argv if a != "--debug")]
    import warnings

    shown = warnings.formatwarning
    if not debug:  # warnings print as one "Note: ..." line, not with source lines
        warnings.formatwarning = _warning_line
    try:
        args = build_parser().parse_args(argv)
        return int(args.func(args) or 0)
    except KeyboardInterrupt as exc:  # Ctrl+C, or SIGTERM/SIGINT in a parallel sweep
        print(str(exc) or "Interrupted.", file=sys.stderr)
        return getattr(exc, "exit_code", 130)
    except SystemExit:  # --help and --version exit 0 through argparse
        raise
    except Exception as exc:
        if debug:
            traceback.print_exc()
        print(_one_line(exc), file=sys.stderr)
        return 1
    finally:
        warnings.formatwarning = shown


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
