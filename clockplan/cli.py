"""The command line: a thin layer that parses arguments and hands off to one command module.

Each subcommand lives in ``clockplan/commands/<name>.py`` with ``register(subparsers)``;
errors that clockplan raises on purpose become one line on standard error and exit 2.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from clockplan import __version__
from clockplan.commands import COMMAND_MODULES
from clockplan.errors import ClockplanError

__all__ = ["main", "main_entry", "build_parser"]

EXIT_BAD_INPUT = 2


def build_parser() -> argparse.ArgumentParser:
    """The whole argument parser, one subparser per command module."""
    parser = argparse.ArgumentParser(
        prog="clockplan",
        description="Choose reference oscillators and clock-tree settings so every peripheral "
        "gets a clock inside its tolerance.",
    )
    parser.add_argument("--version", action="version", version=f"clockplan {__version__}")
    parser.add_argument("--debug", action="store_true", help="show a traceback on errors")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for module in COMMAND_MODULES:
        module.register(subparsers)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; return its exit status (0 ok, 1 no plan fits, 2 bad input)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args))
    except ClockplanError as error:
        if args.debug:
            raise
        print(f"clockplan: {error}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("clockplan: interrupted", file=sys.stderr)
        return 130


def main_entry() -> None:
    """Console-script entry point."""
    sys.exit(main())
