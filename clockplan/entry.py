"""The console entry point, kept free of imports so that Ctrl-C is caught from the start.

Importing the command line (and through it rich, numpy or OR-Tools) takes a noticeable
moment; a Ctrl-C in it must end the run like one during a search: one line, exit 130.
Only the interpreter's own start and this module's two imports come before the guard.
"""

import sys

EXIT_INTERRUPTED = 130
"""``clockplan.exits.Exit.INTERRUPTED``, written out so nothing is imported before the guard."""


def main_entry() -> None:
    """Run the command line; a Ctrl-C anywhere, imports included, exits 130 with one line."""
    try:
        from clockplan.cli import main

        status = main()
    except KeyboardInterrupt:
        sys.stderr.write("clockplan: interrupted\n")
        status = EXIT_INTERRUPTED
    sys.exit(status)
