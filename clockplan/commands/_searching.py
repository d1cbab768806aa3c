"""What every searching command (plan, check, show, diff) takes and how it runs a search."""

from __future__ import annotations

import argparse
import sys
import time
from dataclasses import dataclass, replace
from functools import partial

from rich.console import Console
from rich.progress import Progress

from clockplan.errors import InputError
from clockplan.result import SearchResult, Status
from clockplan.scenario import default_scenario_path, load_scenario
from clockplan.solve import search
from clockplan.solve.explain import explain_infeasibility
from clockplan.solve.search import DEFAULT_TIME_LIMIT, DEFAULT_WORKERS, MAX_WORKERS

__all__ = ["SearchOptions", "add_search_options", "run_search"]


@dataclass(frozen=True)
class SearchOptions:
    """One search as the command line asks for it."""

    file: str | None
    """The scenario file; None for the bundled demo board."""
    top: int
    time_limit: float
    workers: int
    started: float
    """When the command began (``time.monotonic()``): the time limit counts from here."""

    @classmethod
    def of(cls, args: argparse.Namespace, *, top: int | None = None) -> SearchOptions:
        """The search options among a command's parsed arguments (``top`` overridden)."""
        return cls(
            file=args.file,
            top=args.top if top is None else top,
            time_limit=args.time_limit,
            workers=args.workers,
            started=getattr(args, "started", None) or time.monotonic(),
        )


def add_search_options(parser: argparse.ArgumentParser) -> None:
    """FILE, --top, --time-limit and --workers, shared by the commands that search."""
    parser.add_argument(
        "file", nargs="?", help="scenario file (TOML); default: the bundled demo board"
    )
    parser.add_argument(
        "--top", type=int, default=5, metavar="K", help="how many plans to rank (default 5)"
    )
    parser.add_argument(
        "--time-limit",
        type=float,
        default=DEFAULT_TIME_LIMIT,
        metavar="S",
        help=f"seconds the whole run may take (default {DEFAULT_TIME_LIMIT:g})",
    )
    parser.add_argument(
        "--workers",
        type=int,
        default=DEFAULT_WORKERS,
        metavar="N",
        help=f"CP-SAT search threads (default {DEFAULT_WORKERS}); the plans do not depend on it",
    )


def run_search(
    args: SearchOptions, *, show_progress: bool, explain: bool = False, closest: bool = False
) -> SearchResult:
    """Load the scenario named by ``args`` and search it, with a progress bar on slow runs.

    The time limit counts from ``args.started`` (when the command began). With ``explain``
    a proved "no plan" comes back with its explanation, inside the same time limit.
    """
    if args.top < 1:
        raise InputError("--top", f"{args.top} is not a positive count of plans")
    if not 1 <= args.workers <= MAX_WORKERS:
        raise InputError(
            "--workers", f"{args.workers} is not a thread count from 1 to {MAX_WORKERS}"
        )
    if not args.time_limit > 0:
        raise InputError("--time-limit", f"{args.time_limit} is not a positive number of seconds")
    started = args.started
    scenario = load_scenario(default_scenario_path() if args.file is None else args.file)
    run = partial(
        search,
        scenario,
        top=args.top,
        time_limit=args.time_limit,
        workers=args.workers,
        closest=closest,
    )
    if not show_progress or not sys.stderr.isatty():
        result = run(started=started)
    else:
        with Progress(console=Console(stderr=True), transient=True) as progress:
            task = progress.add_task("searching", total=args.top, visible=False)

            def report(done: int, total: int) -> None:
                visible = time.monotonic() - started > 1.0
                progress.update(task, completed=done, total=total, visible=visible)

            result = run(started=started, progress=report)
    if explain and result.status is Status.INFEASIBLE and not result.interrupted:
        remaining = started + args.time_limit - time.monotonic()
        explanation = explain_infeasibility(scenario, time_limit=remaining)
        result = replace(result, explanation=explanation, elapsed=time.monotonic() - started)
    return result
