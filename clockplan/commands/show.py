"""``clockplan show [FILE]``: the clock tree of one plan in the terminal, and its exports.

Exports (each written only when asked for): DOT and GraphML graphs, an SVG picture,
a C header of the settings, a Markdown report; ``--json`` prints the chosen plan in
the JSON contract. Output paths are checked before the search starts, and an existing
file is replaced only with ``--force``.
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path

from rich.console import Console
from rich.text import Text

from clockplan._frozen import frozen
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


@dataclass(frozen=True)
class ShowOptions:
    """What ``clockplan show`` was asked for."""

    search: SearchOptions
    """The search, ranking at least ``rank`` plans."""
    rank: int
    """Which ranked plan to show, from 1."""
    exports: Mapping[str, str]
    """The export paths asked for, by export name (``"svg"`` …), in ``EXPORTS`` order."""
    force: bool
    """Replace output files that already exist."""
    json: bool
    """Print the shown plan as JSON instead of the tree."""

    def __post_init__(self) -> None:
        object.__setattr__(self, "exports", frozen(self.exports))

    @property
    def inputs(self) -> tuple[str | Path, ...]:
        """The scenario file read, which no export may replace."""
        file = self.search.file
        return (default_scenario_path() if file is None else file,)


def _targets(options: ShowOptions) -> dict[str, Path]:
    """The export paths asked for, checked before any search work is spent."""
    targets: dict[str, Path] = {}
    for name, path in options.exports.items():
        target = check_target(path, force=options.force, option=f"--{name}", inputs=options.inputs)
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
    """Read the parsed arguments once and show the plan (see :func:`show`)."""
    if args.rank < 1:
        raise InputError("--rank", f"{args.rank} is not a rank; ranks start at 1")
    if args.top < 1:
        raise InputError("--top", f"{args.top} is not a positive count of plans")
    exports = {name: getattr(args, name) for name in EXPORTS if getattr(args, name) is not None}
    options = ShowOptions(
        SearchOptions.of(args, top=max(args.top, args.rank)),
        rank=args.rank,
        exports=exports,
        force=args.force,
        json=args.json,
    )
    return show(options)


def show(options: ShowOptions) -> int:
    """Print the tree (or JSON) and write the exports; exit 1 when the plan misses an allowance."""
    targets = _targets(options)
    result = run_search(options.search, show_progress=not options.json)
    console = Console()
    notes = Console(stderr=True) if options.json else console
    if not result.plans:
        if options.json:
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
    if len(result.plans) < options.rank:
        found = len(result.plans)
        raise InputError("--rank", f"{options.rank}: the search ranked only {found} plans")
    ranked = result.plans[options.rank - 1]
    if options.json:
        print(json.dumps(_json_document(result, ranked), indent=2))
    else:
        console.print(status_line(result))
        console.print(plan_tree(result.scenario, ranked))
        console.print(legend())
    for name, target in targets.items():
        text = EXPORTS[name][1](result, ranked)
        write_atomic(target, text, force=options.force, option=f"--{name}", inputs=options.inputs)
        notes.print(
            f"wrote {printable(str(target))}", markup=False, highlight=False, soft_wrap=True
        )
    return Exit.OK if ranked.evaluation.feasible else Exit.NO_PLAN
