"""``clockplan diff FILE_A [FILE_B]``: what changed between two plans, node by node.

Two files (rank 1 of each unless told otherwise), or two ranks of one file (1 and 2
unless told otherwise). Compared exactly: oscillator and clock frequencies, every
setting, and per peripheral rate the achieved rate, the synthesis error and the
share of the allowance. Only what differs is listed.
"""

from __future__ import annotations

import argparse
import json
import time
from dataclasses import dataclass, replace

from rich.console import Console

from clockplan.commands._searching import SearchOptions, run_search
from clockplan.compare import Side, plan_changes
from clockplan.errors import InputError
from clockplan.exits import Exit
from clockplan.export import changes_to_data
from clockplan.render import changes_table, sides_text
from clockplan.result import SearchResult, Status
from clockplan.solve.search import DEFAULT_TIME_LIMIT, DEFAULT_WORKERS


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``diff`` subcommand."""
    parser = subparsers.add_parser(
        "diff",
        help="what changed between two plans (two files, or two ranks of one file)",
        description="Compare two plans node by node: oscillator and clock frequencies, "
        "settings, and each rate's achieved value, error and share of its allowance.",
    )
    parser.add_argument("file_a", metavar="FILE_A", help="scenario file of plan A")
    parser.add_argument(
        "file_b", metavar="FILE_B", nargs="?", help="scenario file of plan B (default: FILE_A)"
    )
    parser.add_argument(
        "--rank-a", type=int, default=1, metavar="N", help="rank of plan A (default 1)"
    )
    parser.add_argument(
        "--rank-b",
        type=int,
        default=None,
        metavar="M",
        help="rank of plan B (default 2 with one file, 1 with two)",
    )
    parser.add_argument(
        "--time-limit",
        type=float,
        default=DEFAULT_TIME_LIMIT,
        metavar="S",
        help=f"seconds each search may take (default {DEFAULT_TIME_LIMIT:g})",
    )
    parser.add_argument(
        "--workers",
        type=int,
        default=DEFAULT_WORKERS,
        metavar="N",
        help=f"CP-SAT search threads (default {DEFAULT_WORKERS})",
    )
    parser.add_argument(
        "--json", action="store_true", help="print the changes as JSON on standard output"
    )
    parser.set_defaults(func=run)


@dataclass(frozen=True)
class DiffOptions:
    """What ``clockplan diff`` was asked for: two plans, each searched with its own time limit."""

    file_a: str
    file_b: str | None
    """None: plan B is another rank of ``file_a``."""
    rank_a: int
    rank_b: int
    time_limit: float
    """Seconds each search may take."""
    workers: int
    json: bool
    """Print the changes as JSON instead of a table."""


def _pick(result: SearchResult, rank: int, option: str) -> Side:
    if not result.plans:
        raise InputError(option, f"{result.scenario.file}: no plan to compare ({result.status})")
    if result.closest and rank > 1:
        raise InputError(option, f"{rank}: {result.scenario.file} has no plan; only its closest")
    if len(result.plans) < rank:
        found = len(result.plans)
        raise InputError(option, f"{rank}: {result.scenario.file} has only {found} ranked plans")
    return Side(result.scenario, result.plans[rank - 1], closest=result.closest)


def _search(file: str, top: int, options: DiffOptions) -> SearchResult:
    """One side's search, with a time limit of its own. When no plan meets every allowance
    (proved), the closest plan is searched instead, with a time limit of its own too."""
    search = SearchOptions(file, top, options.time_limit, options.workers, started=time.monotonic())
    result = run_search(search, show_progress=not options.json)
    if result.status is not Status.INFEASIBLE or result.interrupted:
        return result
    search = replace(search, top=1, started=time.monotonic())
    return run_search(search, show_progress=not options.json, closest=True)


def run(args: argparse.Namespace) -> int:
    """Read the parsed arguments once and compare the plans (see :func:`diff`)."""
    rank_b = args.rank_b if args.rank_b is not None else (1 if args.file_b else 2)
    for option, rank in (("--rank-a", args.rank_a), ("--rank-b", rank_b)):
        if rank < 1:
            raise InputError(option, f"{rank} is not a rank; ranks start at 1")
    options = DiffOptions(
        args.file_a, args.file_b, args.rank_a, rank_b, args.time_limit, args.workers, args.json
    )
    return diff(options)


def diff(options: DiffOptions) -> int:
    """Search the plans named, compare them and print the changes."""
    rank_a, rank_b = options.rank_a, options.rank_b
    if options.file_b is None:
        result = _search(options.file_a, max(rank_a, rank_b), options)
        a, b = _pick(result, rank_a, "--rank-a"), _pick(result, rank_b, "--rank-b")
    else:
        a = _pick(_search(options.file_a, rank_a, options), rank_a, "--rank-a")
        b = _pick(_search(options.file_b, rank_b, options), rank_b, "--rank-b")
    changes = plan_changes(a, b)
    if options.json:
        document = changes_to_data(a, b, changes)
        print(json.dumps(document, indent=2))
        return Exit.OK
    console = Console()
    console.print(sides_text(a, b))
    if changes:
        console.print(changes_table(a, b, changes))
    else:
        console.print("The two plans are the same.")
    return Exit.OK
