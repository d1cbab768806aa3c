"""``clockplan plan [FILE]``: the ranked table of candidate plans for a board."""

from __future__ import annotations

import argparse
import json
from dataclasses import dataclass

from rich.console import Console

from clockplan.commands._searching import SearchOptions, add_search_options, run_search
from clockplan.export import result_to_data
from clockplan.render import (
    budget_table,
    explanation_text,
    ranking_table,
    rates_table,
    status_line,
)


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
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


@dataclass(frozen=True)
class PlanOptions:
    """What ``clockplan plan`` was asked for."""

    search: SearchOptions
    json: bool
    """Print the plans as JSON instead of tables."""


def run(args: argparse.Namespace) -> int:
    """Read the parsed arguments once and rank the plans (see :func:`plan`)."""
    return plan(PlanOptions(SearchOptions.of(args), json=args.json))


def plan(options: PlanOptions) -> int:
    """Print the ranking; the exit status says whether the best plan fits and was proved."""
    result = run_search(options.search, show_progress=not options.json, explain=True)
    if options.json:
        print(json.dumps(result_to_data(result), indent=2))
        return result.exit_status
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
    return result.exit_status
