"""``clockplan show [FILE]``: the clock tree of one plan in the terminal, and its exports.

Exports (each written only when asked for): DOT and GraphML graphs, an SVG picture,
a C header of the settings, a Markdown report; ``--json`` prints the chosen plan in
the JSON contract. Output paths are checked before the search starts, and an existing
file is replaced only with ``--force``.
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable
from pathlib import Path

from rich.console import Console
from rich.text import Text

from clockplan.commands._searching import SearchOptions, add_search_options, run_search
from clockplan.drawing import plan_svg
from clockplan.errors import InputError
from clockplan.exits import Exit
from clockplan.export import plan_to_data, result_to_data
from clockplan.files import check_target, write_atomic
from clockplan.graphs import dot_text, graphml_text, plan_graph
from clockplan.header import header_text
from clockplan.phrases import Phrases
from clockplan.render import status_line
from clockplan.report import report_text
from clockplan.result import RankedPlan, SearchResult, Status
from clockplan.scenario import default_scenario_path
from clockplan.text_safety import printable
from clockplan.treeview import legend, plan_tree

Writer = Callable[[SearchResult, RankedPlan], str]

EXPORTS: dict[str, tuple[str, Writer]] = {
    "dot": ("the plan graph in DOT (Graphviz)", lambda r, p: dot_text(plan_graph(r.scenario, p))),
    "graphml": ("the plan graph in GraphML", lambda r, p: graphml_text(plan_graph(r.scenario, p))),
    "svg": ("a picture of the tree (SVG)", lambda r, p: plan_svg(plan_graph(r.scenario, p))),
    "header": ("a C header of the settings", lambda r, p: header_text(r.scenario, p)),
    "report": ("a Markdown report", report_text),
}
"""Each export's option name (``--dot``), help text and text maker."""


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``show`` subcommand."""
    parser = subparsers.add_parser(
        "show",
        help="show one plan's clock tree and write it as DOT, GraphML, SVG, C header or report",
        description="Search like 'plan', then print the clock tree of one ranked plan with "
        "every frequency, setting and rate, and write the exports asked for.",
    )
    add_search_options(parser)
    parser.add_argument(
        "--rank",
        type=int,
        default=1,
        metavar="N",
        help="which ranked plan to show (default 1, the best); searches at least N plans",
    )
    for name, (what, _) in EXPORTS.items():
        parser.add_argument(f"--{name}", metavar="PATH", help=f"write {what} to PATH")
    parser.add_argument(
        "--force", action="store_true", help="replace output files that already exist"
    )
    parser.add_argument(
        "--json", action="store_true", help="print the shown plan as JSON on standard output"
    )
    parser.set_defaults(func=run)


def _inputs(args: argparse.Namespace) -> tuple[str | Path, ...]:
    """The scenario file read, which no export may replace."""
    return (default_scenario_path() if args.file is None else args.file,)


def _targets(args: argparse.Namespace) -> dict[str, Path]:
    """The export paths asked for, checked before any search work is spent."""
    targets: dict[str, Path] = {}
    for name in EXPORTS:
        path = getattr(args, name)
        if path is None:
            continue
        target = check_target(path, force=args.force, option=f"--{name}", inputs=_inputs(args))
        for other, seen in targets.items():
            if seen.resolve() == target.resolve():
                raise InputError(f"--{name}", f"{path} is also the path of --{other}")
        targets[name] = target
    return targets


def _json_document(result: SearchResult, ranked: RankedPlan) -> dict[str, object]:
    """The JSON contract's envelope holding only the shown plan."""
    document = result_to_data(result)
    document["plans"] = [plan_to_data(result, ranked)]
    document["shown_rank"] = ranked.rank
    return document


def run(args: argparse.Namespace) -> int:
    """Print the tree (or JSON) and write the exports; exit 1 when the plan misses an allowance."""
    if args.rank < 1:
        raise InputError("--rank", f"{args.rank} is not a rank; ranks start at 1")
    if args.top < 1:
        raise InputError("--top", f"{args.top} is not a positive count of plans")
    targets = _targets(args)
    options = SearchOptions.of(args, top=max(args.top, args.rank))
    result = run_search(options, show_progress=not args.json)
    console = Console()
    notes = Console(stderr=True) if args.json else console
    if not result.plans:
        if args.json:
            print(json.dumps(result_to_data(result), indent=2))
        notes.print(status_line(result))
        why = (
            "'clockplan plan' explains which limits conflict"
            if result.status is Status.INFEASIBLE
            else "the time limit came before any plan"
        )
        sentences = (Text(f"No plan to show; {why}."), Text(" Nothing written."))
        notes.print(Phrases((sentences,)), style="bold red")
        return Exit.NO_PLAN
    if len(result.plans) < args.rank:
        raise InputError("--rank", f"{args.rank}: the search ranked only {len(result.plans)} plans")
    ranked = result.plans[args.rank - 1]
    if args.json:
        print(json.dumps(_json_document(result, ranked), indent=2))
    else:
        console.print(status_line(result))
        console.print(plan_tree(result.scenario, ranked))
        console.print(legend())
    for name, target in targets.items():
        text = EXPORTS[name][1](result, ranked)
        write_atomic(target, text, force=args.force, option=f"--{name}", inputs=_inputs(args))
        notes.print(
            f"wrote {printable(str(target))}", markup=False, highlight=False, soft_wrap=True
        )
    return Exit.OK if ranked.evaluation.feasible else Exit.NO_PLAN
