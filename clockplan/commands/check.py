"""``clockplan check [FILE]``: a terse yes/no for CI, with the reason when no plan fits.

Exit 0 when the best plan meets every allowance, 1 when none does (or the time limit
stopped the search before a plan), 2 on a bad file or option.
"""

from __future__ import annotations

import argparse
import json

from rich.console import Console

from clockplan.commands.plan import add_search_options, run_search
from clockplan.errors import InputError
from clockplan.export import plan_to_data
from clockplan.quantities import format_hz
from clockplan.render import explanation_text
from clockplan.solve import Status
from clockplan.solve.explain import explain_infeasibility
from clockplan.text_safety import printable

EXIT_OK, EXIT_NO_PLAN = 0, 1


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
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


def run(args: argparse.Namespace) -> int:
    """Print the verdict; return 0 (fits), 1 (no plan fits) or 2 (raised as an error)."""
    if args.top < 1:  # check ranks one plan, but a bad --top is still a mistake to report
        raise InputError("--top", f"{args.top} is not a positive count of plans")
    args.top = 1
    result = run_search(args, show_progress=False)
    best = result.plans[0] if result.plans else None
    fits = best is not None and best.evaluation.feasible
    explanation = None
    if result.status is Status.INFEASIBLE:
        explanation = explain_infeasibility(result.scenario, time_limit=args.time_limit)
    if args.json:
        data = {
            "scenario": result.scenario.title,
            "file": result.scenario.file,
            "status": result.status.value,
            "meets_every_allowance": fits,
            "best": plan_to_data(result, best) if best else None,
            "conflict": list(explanation.conflict) if explanation else [],
            "conflict_is_minimal": explanation.minimal if explanation else None,
            "beyond_sources": list(explanation.beyond_sources) if explanation else [],
            "relaxations": [{"limit": r.limit, "advice": r.advice} for r in explanation.relaxations]
            if explanation
            else [],
        }
        print(json.dumps(data, indent=2))
        return EXIT_OK if fits else EXIT_NO_PLAN
    console = Console(highlight=False, soft_wrap=True)
    title = printable(f"{result.scenario.file}: {result.scenario.title}")
    if fits and best is not None:
        oscillators = ", ".join(f"{n} {format_hz(f)}" for n, f in best.plan.sources.items())
        worst = best.evaluation.worst
        limited = f", limited by {worst.requirement.peripheral}" if worst else ""
        console.print(
            f"ok: {title}: {oscillators}; worst share {float(best.evaluation.worst_share):.2%}"
            f"{limited} ({result.status.value})"
        )
        return EXIT_OK
    if explanation is not None:
        console.print(f"no plan: {title}")
        console.print(explanation_text(explanation))
    else:
        console.print(f"no plan found: {title}: the time limit stopped the search (not proved)")
    return EXIT_NO_PLAN
