"""The exit statuses of every command, in one enum.

It imports nothing of clockplan's, so the console entry point can hold it before its
Ctrl-C guard; the rule that picks a search's status is ``SearchResult.exit_status``.
"""

from __future__ import annotations

from enum import IntEnum

__all__ = ["Exit"]


class Exit(IntEnum):
    """What a command's exit status says (README, "How plans are ranked")."""

    OK = 0
    """Done: the best plan meets every allowance, and every stage of every plan is proved."""
    NO_PLAN = 1
    """Proved: no plan meets every limit and allowance (``crystals``: no oscillator meets
    every rate; ``pierce``: the gain margin or the drive level check fails)."""
    BAD_INPUT = 2
    """A scenario file or option is wrong; one line says which and why."""
    NOT_PROVED = 3
    """The time limit stopped a proof before it ended; the output names what was cut."""
    INTERNAL = 4
    """A fault in clockplan itself (never the input's), reported in one line."""
    INTERRUPTED = 130
    """Ctrl-C: the plans found until then were printed."""
