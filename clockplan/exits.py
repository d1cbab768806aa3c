"""The exit statuses of every command, and the one rule that picks a search's status."""

from __future__ import annotations

from enum import IntEnum

from clockplan.result import SearchResult, Status

__all__ = ["Exit", "search_exit"]


class Exit(IntEnum):
    """What a command's exit status says (README, "How plans are ranked")."""

    OK = 0
    """Done: the best plan meets every allowance, and every stage of every plan is proved."""
    NO_PLAN = 1
    """Proved: no plan meets every limit and allowance."""
    BAD_INPUT = 2
    """A scenario file or option is wrong; one line says which and why."""
    NOT_PROVED = 3
    """The time limit stopped a proof before it ended; the output names what was cut."""
    INTERNAL = 4
    """A fault in clockplan itself (never the input's), reported in one line."""
    INTERRUPTED = 130
    """Ctrl-C: the plans found until then were printed."""


def search_exit(result: SearchResult) -> Exit:
    """The exit status of a search: interrupted, no plan (proved), not proved, or done."""
    if result.interrupted:
        return Exit.INTERRUPTED
    if result.status is Status.INFEASIBLE:
        return Exit.NO_PLAN
    if not result.plans or not result.proved:
        return Exit.NOT_PROVED
    return Exit.OK if result.plans[0].evaluation.feasible else Exit.NO_PLAN
