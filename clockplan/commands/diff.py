"""``clockplan diff FILE_A [FILE_B]``: what changed between two plans, node by node.

Two files (rank 1 of each unless told otherwise), or two ranks of one file (1 and 2
unless told otherwise). Compared exactly: oscillator and clock frequencies, every
setting, and per peripheral rate the achieved rate, the synthesis error and the
share of the allowance. Only what differs is listed.
"""

from __future__ import annotations

import argparse
import json
from dataclasses import asdict, dataclass
from fractions import Fraction

from rich.console import Console
from rich.table import Table

from clockplan.commands.plan import run_search
from clockplan.errors import InputError
from clockplan.evaluate import RateCheck
from clockplan.graphs import node_settings
from clockplan.plan import SettingValue
from clockplan.quantities import exact_string, format_hz, format_relative
from clockplan.render import format_rate
from clockplan.scenario import Scenario
from clockplan.solve import RankedPlan, SearchResult
from clockplan.solve.search import DEFAULT_TIME_LIMIT, DEFAULT_WORKERS
from clockplan.text_safety import printable

EXIT_OK = 0

Value = str | int | float | None
"""A compared value as JSON holds it: an exact string, a setting, a float figure, or absent."""


@dataclass(frozen=True)
class Side:
    """One of the two plans compared."""

    scenario: Scenario
    ranked: RankedPlan


@dataclass(frozen=True)
class Change:
    """One thing that differs between plan A and plan B."""

    node: str
    aspect: str
    """oscillator, clock, setting, achieved, error or share."""
    item: str
    """The setting's name or the rate's label; empty for a node's own frequency."""
    a: Value
    b: Value
    a_text: str
    b_text: str


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
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


def _frequency(value: Fraction | None) -> tuple[Value, str]:
    return (None, "-") if value is None else (exact_string(value), format_hz(value))


def _setting(value: SettingValue | None) -> tuple[Value, str]:
    return (None, "-") if value is None else (value, str(value))


def _node_order(a: Scenario, b: Scenario) -> list[str]:
    names = [*a.clock_names, *(p.name for p in a.peripherals)]
    names += [*b.clock_names, *(p.name for p in b.peripherals)]
    return list(dict.fromkeys(names))


def _rates(side: Side, node: str) -> dict[str, RateCheck]:
    checks = side.ranked.evaluation.checks
    return {c.requirement.label: c for c in checks if c.requirement.peripheral == node}


def _rate_figures(check: RateCheck | None) -> dict[str, tuple[Fraction | None, Value, str]]:
    """Per aspect: the exact value compared, its JSON value and its display text."""
    if check is None:
        return {aspect: (None, None, "-") for aspect in ("achieved", "error", "share")}
    return {
        "achieved": (
            check.achieved,
            exact_string(check.achieved),
            format_rate(check.achieved, check.requirement.unit),
        ),
        "error": (
            check.error,
            float(check.error * 10**6),
            format_relative(check.error, signed=True),
        ),
        "share": (check.share, float(check.share), f"{float(check.share) * 100:.2f} %"),
    }


def plan_changes(a: Side, b: Side) -> tuple[Change, ...]:
    """Every difference between two plans, node by node in A's order, then B's extra nodes."""
    changes: list[Change] = []
    for node in _node_order(a.scenario, b.scenario):
        clocks = (a.ranked.evaluation.clocks.get(node), b.ranked.evaluation.clocks.get(node))
        if clocks[0] != clocks[1]:
            sourced = node in a.ranked.plan.sources or node in b.ranked.plan.sources
            (value_a, text_a), (value_b, text_b) = map(_frequency, clocks)
            aspect = "oscillator" if sourced else "clock"
            changes.append(Change(node, aspect, "", value_a, value_b, text_a, text_b))
        settings_a = node_settings(a.ranked.plan, node)
        settings_b = node_settings(b.ranked.plan, node)
        for name in dict.fromkeys([*settings_a, *settings_b]):
            if settings_a.get(name) != settings_b.get(name):
                (value_a, text_a), (value_b, text_b) = (
                    _setting(settings_a.get(name)),
                    _setting(settings_b.get(name)),
                )
                changes.append(Change(node, "setting", name, value_a, value_b, text_a, text_b))
        rates_a, rates_b = _rates(a, node), _rates(b, node)
        for label in dict.fromkeys([*rates_a, *rates_b]):
            figures_a = _rate_figures(rates_a.get(label))
            figures_b = _rate_figures(rates_b.get(label))
            for aspect, (exact_a, value_a, text_a) in figures_a.items():
                exact_b, value_b, text_b = figures_b[aspect]
                if exact_a != exact_b:
                    changes.append(Change(node, aspect, label, value_a, value_b, text_a, text_b))
    return tuple(changes)


def _describe(side: Side) -> dict[str, object]:
    return {
        "scenario": side.scenario.title,
        "file": side.scenario.file,
        "rank": side.ranked.rank,
        "status": side.ranked.status.value,
    }


def changes_table(a: Side, b: Side, changes: tuple[Change, ...]) -> Table:
    """The changes as a table, node by node; a node's name is shown on its first row only."""
    table = Table(title="What changed from plan A to plan B", title_justify="left")
    table.add_column("node")
    table.add_column("what")
    table.add_column(f"A: rank {a.ranked.rank}", justify="right")
    table.add_column(f"B: rank {b.ranked.rank}", justify="right")
    previous = None
    for change in changes:
        what = f"{change.aspect} {change.item}".strip()
        table.add_row(
            change.node if change.node != previous else "", what, change.a_text, change.b_text
        )
        previous = change.node
    return table


def _pick(result: SearchResult, rank: int, option: str) -> Side:
    if not result.plans:
        raise InputError(option, f"{result.scenario.file}: no plan to compare ({result.status})")
    if len(result.plans) < rank:
        found = len(result.plans)
        raise InputError(option, f"{rank}: {result.scenario.file} has only {found} ranked plans")
    return Side(result.scenario, result.plans[rank - 1])


def _search(file: str, top: int, args: argparse.Namespace) -> SearchResult:
    options = argparse.Namespace(
        file=file, top=top, time_limit=args.time_limit, workers=args.workers
    )
    return run_search(options, show_progress=not args.json)


def run(args: argparse.Namespace) -> int:
    """Search the plans named, compare them and print the changes."""
    rank_b = args.rank_b if args.rank_b is not None else (1 if args.file_b else 2)
    for option, rank in (("--rank-a", args.rank_a), ("--rank-b", rank_b)):
        if rank < 1:
            raise InputError(option, f"{rank} is not a rank; ranks start at 1")
    if args.file_b is None:
        result = _search(args.file_a, max(args.rank_a, rank_b), args)
        a, b = _pick(result, args.rank_a, "--rank-a"), _pick(result, rank_b, "--rank-b")
    else:
        a = _pick(_search(args.file_a, args.rank_a, args), args.rank_a, "--rank-a")
        b = _pick(_search(args.file_b, rank_b, args), rank_b, "--rank-b")
    changes = plan_changes(a, b)
    if args.json:
        document = {
            "a": _describe(a),
            "b": _describe(b),
            "changes": [
                {key: value for key, value in asdict(change).items() if not key.endswith("_text")}
                for change in changes
            ],
        }
        print(json.dumps(document, indent=2))
        return EXIT_OK
    console = Console()
    for label, side in (("A", a), ("B", b)):
        console.print(
            printable(
                f"{label}: {side.scenario.title} ({side.scenario.file}), rank {side.ranked.rank}, "
                f"{side.ranked.status.value}"
            ),
            markup=False,
            highlight=False,
        )
    if changes:
        console.print(changes_table(a, b, changes))
    else:
        console.print("The two plans are the same.")
    return EXIT_OK
