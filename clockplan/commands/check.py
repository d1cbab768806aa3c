"""``clockplan check [FILE]``: a terse verdict for CI, with the reason when no plan fits.

Exit 0 when the best plan meets every allowance and every stage of it is proved, 1 when
no plan can (proved), 2 on a bad file or option, 3 when the time limit stopped a proof.
"""

from __future__ import annotations

import argparse
import json
from dataclasses import dataclass

from rich.console import Console

from clockplan.commands._searching import SearchOptions, add_search_options, run_search
from clockplan.errors import InputError
from clockplan.exits import Exit
from clockplan.export import explanation_to_data, plan_to_data
from clockplan.quantities import format_hz
from clockplan.render import explanation_text
from clockplan.text import format_share
from clockplan.text_safety import printable


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``check`` subcommand."""
    parser = subparsers.add_parser(
        "check",
        help="exit 0 when a plan meets every allowance, 1 when none does (for CI)",
        description="Search the scenario for its best plan; say in one line whether it meets "
        "every allowance, and why not when no plan can.",
    )
    add_search_options(parser)
    parser.add_argument("--json", action="store_true", help="print the verdict as JSON")
    parser.set_defaults(func=run, top=1)


@dataclass(frozen=True)
class CheckOptions:
    """What ``clockplan check`` was asked for: its search ranks one plan."""

    search: SearchOptions
    json: bool
    """Print the verdict as JSON instead of one line."""


def run(args: argparse.Namespace) -> int:
    """Read the parsed arguments once and give the verdict (see :func:`check`)."""
    if args.top < 1:  # check ranks one plan, but a bad --top is still a mistake to report
        raise InputError("--top", f"{args.top} is not a positive count of plans")
    return check(CheckOptions(SearchOptions.of(args, top=1), json=args.json))


def check(options: CheckOptions) -> int:
    """Print the verdict and return the exit status (see the module docstring)."""
    result = run_search(options.search, show_progress=False, explain=True)
    verdict = result.exit_status
    best = result.plans[0] if result.plans else None
    if options.json:
        data = {
            "scenario": result.scenario.title,
            "file": result.scenario.file,
            "status": result.status.value,
            "proved": result.proved,
            "exit_status": int(verdict),
            "meets_every_allowance": best is not None and best.evaluation.feasible,
            "unproved_stages": list(best.unproved) if best else [],
            "best": plan_to_data(result, best) if best else None,
            "explanation": explanation_to_data(result.explanation),
        }
        print(json.dumps(data, indent=2))
        return verdict
    console = Console(highlight=False, soft_wrap=True)
    title = printable(f"{result.scenario.file}: {result.scenario.title}")
    if best is not None:
        oscillators = ", ".join(f"{n} {format_hz(f)}" for n, f in best.choice.items())
        worst = best.evaluation.worst
        limited = f", limited by {worst.requirement.peripheral}" if worst else ""
        figures = f"{oscillators}; worst share {format_share(best.evaluation.worst_share)}{limited}"
        if verdict is Exit.OK:
            console.print(f"ok: {title}: {figures} (every stage proved)", markup=False)
        else:
            cut = ", ".join(best.unproved) or "the ranks"
            console.print(
                f"not proved: {title}: {figures}; the time limit stopped the proof of: {cut}",
                markup=False,
            )
        return verdict
    if result.explanation is not None:
        console.print(f"no plan: {title}", markup=False)
        console.print(explanation_text(result.explanation))
    elif result.interrupted:
        console.print(f"interrupted: {title}: no plan found before Ctrl-C", markup=False)
    else:
        console.print(
            f"not proved: {title}: the time limit stopped the search before any plan",
            markup=False,
        )
    return verdict
