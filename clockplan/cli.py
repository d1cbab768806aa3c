"""The command line: a thin layer that parses arguments and hands off to one command module.

Each subcommand lives in ``clockplan/commands/<name>.py`` with ``register(subparsers)``;
errors that clockplan raises on purpose become one line on standard error and exit 2.
"""

from __future__ import annotations

import argparse
import os
import re
import sys
import time
from collections.abc import Sequence
from typing import NoReturn

from clockplan import __version__
from clockplan.commands import COMMAND_NAMES, command_module
from clockplan.errors import ClockplanError, InternalError
from clockplan.exits import Exit
from clockplan.text_safety import MAX_QUOTED, printable, shorten

__all__ = ["main", "build_parser", "OneLineParser"]


class OneLineParser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line on standard error and exit 2.

    Subparsers are made with the same class, so every subcommand's errors read alike.
    """

    def error(self, message: str) -> NoReturn:
        """Report a usage error as ``clockplan: <message>`` and exit 2."""
        self.exit(Exit.BAD_INPUT, f"clockplan: {safe_line(message)}; see '{self.prog} --help'\n")


def one_line(message: str) -> str:
    """``message`` with its line breaks shown as ``\\n``, so that it stays one line."""
    return "\\n".join(message.splitlines())


MAX_MESSAGE = 2000
"""The longest error line printed; what a message quotes is cut well before this."""


_LONG_QUOTE = re.compile(rf"(?<=: )'((?:[^'\\]|\\.){{{MAX_QUOTED + 1},}})'")
"""A value quoted after a colon, as argparse quotes it ("invalid int value: '999…'"),
that is too long to repeat."""


def safe_line(message: str) -> str:
    """``message`` as one line that changes no terminal: controls escaped, long quotes cut,
    length capped."""
    cut = _LONG_QUOTE.sub(lambda match: repr(shorten(match.group(1))), message)
    return printable(shorten(one_line(cut), MAX_MESSAGE))


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The argument parser: every command, or with ``only`` just that one (faster start)."""
    parser = OneLineParser(
        prog="clockplan",
        description="Choose reference oscillators and clock-tree settings so every peripheral "
        "gets a clock inside its tolerance.",
    )
    parser.add_argument("--version", action="version", version=f"clockplan {__version__}")
    parser.add_argument("--debug", action="store_true", help="show a traceback on errors")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name in COMMAND_NAMES if only is None else (only,):
        command_module(name).register(subparsers)
    return parser


def _command_named(argv: Sequence[str]) -> str | None:
    """The subcommand ``argv`` runs, when it names one (the first word not an option)."""
    word = next((item for item in argv if not item.startswith("-")), None)
    return word if word in COMMAND_NAMES else None


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; return its exit status (0 ok, 1 no plan fits, 2 bad input)."""
    started = time.monotonic()
    words = list(sys.argv[1:] if argv is None else argv)
    command = _command_named(words)
    if command is None and words == ["--version"]:  # answer without importing every command
        print(f"clockplan {__version__}")
        return Exit.OK
    parser = build_parser(command)
    try:
        args = parser.parse_args(words)
    except SystemExit as stop:  # --help, --version, or a usage error already reported
        return stop.code if isinstance(stop.code, int) else Exit.BAD_INPUT
    args.started = started
    try:
        return int(args.func(args))
    except InternalError as error:
        if args.debug:
            raise
        print(
            f"clockplan: internal error (please report it): {one_line(str(error))}", file=sys.stderr
        )
        return Exit.INTERNAL
    except ClockplanError as error:
        if args.debug:
            raise
        print(f"clockplan: {safe_line(str(error))}", file=sys.stderr)
        return Exit.BAD_INPUT
    except KeyboardInterrupt:
        print("clockplan: interrupted", file=sys.stderr)
        return Exit.INTERRUPTED
    except BrokenPipeError:  # the reader went away (`clockplan plan --json | head`)
        sys.stdout = open(os.devnull, "w")  # so the flush at exit raises nothing more
        return Exit.OK
