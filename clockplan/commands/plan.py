"""``clockplan plan [FILE]``: the ranked table of candidate plans for a board."""

from __future__ import annotations

import argparse
import json
import sys
import time
from dataclasses import replace

from rich.console import Console
from rich.progress import Progress

from clockplan.errors import InputError
from clockplan.exits import search_exit
from clockplan.export import result_to_data
from clockplan.render import (
    budget_table,
    explanation_text,
    ranking_table,
    rates_table,
    status_line,
)
from clockplan.result import SearchResult, Status
from clockplan.scenario import default_scenario_path, load_scenario
from clockplan.solve import search
from clockplan.solve.explain import explain_infeasibility
from clockplan.solve.search import DEFAULT_TIME_LIMIT, DEFAULT_WORKERS, MAX_WORKERS


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    """Add the ``plan`` subcommand."""
    parser = subparsers.add_parser(
        "plan",
        help="rank clock plans for a scenario file (the bundled demo board without FILE)",
        description="Search oscillator frequencies and every PLL, divider and mux setting; "
        "print the best plan for each oscillator choice, ranked by worst-case error.",
    )
    add_search_options(parser)
    parser.add_argument(
        "--json", action="store_true", help="print the plans as JSON on standard output"
    )
    parser.set_defaults(func=run)


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
    args: argparse.Namespace, *, show_progress: bool, explain: bool = False
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
    started = getattr(args, "started", None) or time.monotonic()
    scenario = load_scenario(default_scenario_path() if args.file is None else args.file)
    options = {"top": args.top, "time_limit": args.time_limit, "workers": args.workers}
    if not show_progress or not sys.stderr.isatty():
        result = search(scenario, started=started, **options)
    else:
        with Progress(console=Console(stderr=True), transient=True) as progress:
            task = progress.add_task("searching", total=args.top, visible=False)

            def report(done: int, total: int) -> None:
                visible = time.monotonic() - started > 1.0
                progress.update(task, completed=done, total=total, visible=visible)

            result = search(scenario, started=started, progress=report, **options)
    if explain and result.status is Status.INFEASIBLE and not result.interrupted:
        remaining = started + args.time_limit - time.monotonic()
        explanation = explain_infeasibility(scenario, time_limit=remaining)
        result = replace(result, explanation=explanation, elapsed=time.monotonic() - started)
    return result


def run(args: argparse.Namespace) -> int:
    """Print the ranking; the exit status says whether the best plan fits and was proved."""
    result = run_search(args, show_progress=not args.json, explain=True)
    if args.json:
        print(json.dumps(result_to_data(result), indent=2))
        return search_exit(result)
    console = Console()
    console.print(status_line(result))
    if result.plans:
        console.print(ranking_table(result))
        console.print(rates_table(result.plans[0]))
        console.print(budget_table(result, result.plans[0]))
    elif result.explanation is not None:
        console.print(explanation_text(result.explanation))
    elif not result.interrupted:
        console.print("The time limit stopped the search before any plan.", style="bold red")
    return search_exit(result)
