"""The console entry point, kept free of heavy imports so that Ctrl-C is caught from the start.

Importing the command line (and through it rich, numpy or OR-Tools) takes a noticeable
moment; a Ctrl-C in it must end the run like one during a search: one line, exit 130.
Only the interpreter's own start, ``sys`` and the exit enum (``clockplan.exits``, which
imports nothing of clockplan's) come before the guard.
"""

import sys

from clockplan.exits import Exit


def main_entry() -> None:
    """Run the command line; a Ctrl-C anywhere, imports included, exits 130 with one line."""
    try:
        from clockplan.cli import main

        status = main()
    except KeyboardInterrupt:
        sys.stderr.write("clockplan: interrupted\n")
        status = Exit.INTERRUPTED
    sys.exit(status)
