"""``clockplan plan [FILE]``: the ranked table of candidate plans for a board."""

from __future__ import annotations

import argparse
import json
import sys
import time

from rich.console import Console
from rich.progress import Progress

from clockplan.errors import InputError
from clockplan.export import result_to_data
from clockplan.render import (
    budget_table,
    explanation_text,
    ranking_table,
    rates_table,
    status_line,
)
from clockplan.scenario import default_scenario_path, load_scenario
from clockplan.solve import SearchResult, Status, search
from clockplan.solve.explain import explain_infeasibility
from clockplan.solve.search import DEFAULT_TIME_LIMIT, DEFAULT_WORKERS

EXIT_OK, EXIT_NO_PLAN, EXIT_INTERRUPTED = 0, 1, 130


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
        help=f"seconds the search may take (default {DEFAULT_TIME_LIMIT:g})",
    )
    parser.add_argument(
        "--workers",
        type=int,
        default=DEFAULT_WORKERS,
        metavar="N",
        help=f"CP-SAT search threads (default {DEFAULT_WORKERS}); the plans do not depend on it",
    )


def run_search(args: argparse.Namespace, *, show_progress: bool) -> SearchResult:
    """Load the scenario named by ``args`` and search it, with a progress bar on slow runs."""
    if args.top < 1:
        raise InputError("--top", f"{args.top} is not a positive count of plans")
    if not 1 <= args.workers <= 64:
        raise InputError("--workers", f"{args.workers} is not a thread count from 1 to 64")
    if not args.time_limit > 0:
        raise InputError("--time-limit", f"{args.time_limit} is not a positive number of seconds")
    scenario = load_scenario(default_scenario_path() if args.file is None else args.file)
    if not show_progress or not sys.stderr.isatty():
        return search(scenario, top=args.top, time_limit=args.time_limit, workers=args.workers)
    started = time.monotonic()
    with Progress(console=Console(stderr=True), transient=True) as progress:
        task = progress.add_task("searching", total=args.top, visible=False)

        def report(done: int, total: int) -> None:
            visible = time.monotonic() - started > 1.0
            progress.update(task, completed=done, total=total, visible=visible)

        return search(
            scenario,
            top=args.top,
            time_limit=args.time_limit,
            workers=args.workers,
            progress=report,
        )


def run(args: argparse.Namespace) -> int:
    """Print the ranking; exit 1 when no plan meets every allowance."""
    result = run_search(args, show_progress=not args.json)
    if args.json:
        print(json.dumps(result_to_data(result), indent=2))
    else:
        console = Console()
        console.print(status_line(result))
        if result.plans:
            console.print(ranking_table(result))
            console.print(rates_table(result.plans[0]))
            console.print(budget_table(result, result.plans[0]))
        elif result.status is Status.INFEASIBLE and not result.interrupted:
            explanation = explain_infeasibility(result.scenario, time_limit=args.time_limit)
            console.print(explanation_text(explanation))
        else:
            console.print("The time limit stopped the search before any plan.", style="bold red")
    if result.interrupted:
        return EXIT_INTERRUPTED
    best_fits = bool(result.plans) and result.plans[0].evaluation.feasible
    return (
        EXIT_OK
        if best_fits and result.status in (Status.OPTIMAL, Status.FEASIBLE)
        else EXIT_NO_PLAN
    )
