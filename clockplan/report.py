"""A Markdown report of one plan: the job, what was proved, the ranking, the tree and the budget.

Meant to be read by people (a design review, a pull request); the JSON export is the
one for programs. "optimal" is written only when the solver proved it.
"""

from __future__ import annotations

import re

from clockplan import __version__
from clockplan.peripherals import Peripheral
from clockplan.quantities import exact_string, format_hz, format_relative
from clockplan.result import STATUS_WORDS, RankedPlan, SearchResult
from clockplan.scenario import Scenario
from clockplan.text import (
    format_rate,
    format_share,
    limit_text,
    loop_text,
    rate_setting_text,
    rate_verdict,
    setting_text,
    setting_values,
)
from clockplan.text_safety import printable
from clockplan.tree import clock_graph

__all__ = ["report_text", "CAUTIONS"]

CAUTIONS = (
    "Check the crystal's datasheet for its load capacitance, drive level and "
    "equivalent series resistance, and the chip's datasheet for the oscillator's "
    "start-up (gain) margin; the budget above assumes the crystal runs at its "
    "specified load.",
    "The allowances are the interface's own limits or common practice; the other "
    "end of each link (a host, a receiver) spends its own share.",
    "Prototype before production: measure the clocks on a real board, over "
    "temperature where the budget is tight.",
)
"""What every report reminds its reader of (common practice, no source)."""

TERMS = ("tolerance", "stability", "aging", "pulling")
"""The oscillator budget's terms, in the order the report lists them."""


def _md(text: object) -> str:
    """Text safe in Markdown prose and table cells."""
    return re.sub(r"([\\`*_\[\]<>|#])", r"\\\1", printable(str(text)))


def report_text(result: SearchResult, ranked: RankedPlan) -> str:
    """The whole report for ``ranked``, one of ``result``'s plans."""
    scenario = result.scenario
    sections = [
        _job(result, ranked),
        _ranking(result, ranked),
        _tree(scenario, ranked),
        _settings(ranked),
        _sources(scenario, ranked),
        _peripherals(ranked),
        "## Cautions\n\n" + "\n".join(f"- {line}" for line in CAUTIONS),
    ]
    return "\n\n".join(sections) + "\n"


def _job(result: SearchResult, ranked: RankedPlan) -> str:
    scenario = result.scenario
    evaluation = ranked.evaluation
    verdict = (
        "meets every allowance" if evaluation.feasible else "**does not meet every allowance**"
    )
    lines = [
        f"# Clock plan: {_md(scenario.title)}",
        "",
        f"- Scenario file: {_md(scenario.file)}",
        f"- Search: {STATUS_WORDS[result.status]}, {len(result.plans)} plan(s) ranked "
        f"in {result.elapsed:.2f} s"
        + (" (the time limit cut the search short)" if result.time_limited else ""),
        f"- Ranked by, in order: {', '.join(result.order)}",
        f"- This report: plan rank {ranked.rank}, {STATUS_WORDS[ranked.status]}; it {verdict}",
        f"- Worst share of an allowance: {format_share(evaluation.worst_share)}"
        + (
            f" ({_md(evaluation.worst.requirement.peripheral)}, "
            f"{_md(evaluation.worst.requirement.label)})"
            if evaluation.worst
            else ""
        ),
        f"- Made by clockplan {__version__}",
    ]
    if ranked.unproved:
        lines.append(f"- Not proved (the time limit): {', '.join(ranked.unproved)}")
    lines += [f"- Broken limit: {_md(violation)}" for violation in evaluation.violations]
    return "\n".join(lines)


def _ranking(result: SearchResult, chosen: RankedPlan) -> str:
    names = [source.name for source in result.scenario.sources]
    header = ["rank", *names, "worst share", "worst case", "limited by", "status"]
    rows = []
    for ranked in result.plans:
        worst = ranked.evaluation.worst
        rank = f"**{ranked.rank}**" if ranked.rank == chosen.rank else str(ranked.rank)
        rows.append(
            [
                rank,
                *(format_hz(ranked.plan.sources[name]) for name in names),
                format_share(ranked.evaluation.worst_share),
                format_relative(worst.worst_case) if worst else "-",
                _md(f"{worst.requirement.peripheral} ({worst.requirement.label})")
                if worst
                else "-",
                ranked.status.value,
            ]
        )
    return "## Ranked plans\n\n" + _table(header, rows)


def _table(header: list[str], rows: list[list[str]]) -> str:
    lines = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    return "\n".join(lines)


def _tree(scenario: Scenario, ranked: RankedPlan) -> str:
    """The chosen tree as an indented list, from each oscillator outwards."""
    graph = clock_graph(scenario)
    plan, evaluation = ranked.plan, ranked.evaluation
    lines: list[str] = []

    def visit(name: str, depth: int) -> None:
        indent = "  " * depth
        peripheral = scenario.node(name)
        if isinstance(peripheral, Peripheral):
            lines.append(f"{indent}- **{_md(name)}** ({_md(peripheral.kind)})")
            for check in evaluation.checks:
                if check.requirement.peripheral == name:
                    lines.append(
                        f"{indent}  - {_md(check.requirement.label)}: "
                        f"{format_rate(check.achieved, check.requirement.unit)} "
                        f"(`{exact_string(check.achieved)}`), "
                        f"{_md(rate_setting_text(check, plan))}, {format_share(check.share)} of "
                        f"{_md(limit_text(check))}, {rate_verdict(check)}"
                    )
            return
        hz = evaluation.clocks[name]
        what = setting_text(scenario, plan, name) or scenario.source(name).kind
        if loop := loop_text(evaluation, name):
            what += f", {loop}"
        lines.append(
            f"{indent}- **{_md(name)}**: {format_hz(hz)} (`{exact_string(hz)}` Hz), {_md(what)}"
        )
        for child in graph.successors(name):
            chosen = plan.mux_input(child) in (None, name)
            if chosen:
                visit(child, depth + 1)
            else:
                lines.append(f"{indent}  - {_md(child)} (a mux input not chosen)")

    for source in scenario.sources:
        visit(source.name, 0)
    return f"## The chosen tree (rank {ranked.rank})\n\n" + "\n".join(lines)


def _settings(ranked: RankedPlan) -> str:
    shown = setting_values(ranked.plan, ranked.evaluation)
    rows = [[f"`{key}`", _md(value)] for key, value in shown.items()]
    note = (
        "A divisor is shown as the peripheral holds it (a fractional one with its fraction),"
        " an option by its name; the JSON holds the counts the search works in.\n\n"
    )
    return "## Settings\n\n" + note + _table(["setting", "value"], rows)


def _sources(scenario: Scenario, ranked: RankedPlan) -> str:
    header = ["oscillator", "kind", "frequency", *TERMS, "worst case", "RSS"]
    rows = []
    for source in scenario.sources:
        terms = source.terms
        rows.append(
            [
                _md(source.name),
                source.kind,
                format_hz(ranked.plan.sources[source.name]),
                *(format_relative(terms[key]) for key in TERMS),
                format_relative(source.budget),
                format_relative(source.budget_rss),
            ]
        )
    note = (
        "Worst case is the sum of the terms; RSS (root-sum-square) is a statistical "
        "figure shown beside it."
    )
    return "## Error budget per oscillator\n\n" + _table(header, rows) + "\n\n" + note


def _peripherals(ranked: RankedPlan) -> str:
    header = ["peripheral", "rate", "achieved", "error", "worst case", "RSS", "allowance or limit"]
    header += ["margin", "share", "verdict"]
    rows = []
    bases: dict[str, str] = {}
    for check in ranked.evaluation.checks:
        requirement = check.requirement
        bases.setdefault(requirement.peripheral, requirement.allowance_basis)
        rows.append(
            [
                _md(requirement.peripheral),
                _md(
                    f"{requirement.label} ({check.option.label})"
                    if check.option.label
                    else requirement.label
                ),
                format_rate(check.achieved, requirement.unit),
                format_relative(check.error, signed=True),
                check.worst_case_text,
                requirement.worst_case_rss_text(check.worst_case_rss),
                _md(limit_text(check)),
                format_relative(check.margin, signed=True),
                format_share(check.share),
                rate_verdict(check),
            ]
        )
    basis = "\n".join(f"- {_md(name)}: {_md(text)}" for name, text in bases.items())
    note = (
        "Worst case = |error| + the oscillator's worst case; share = worst case ÷ "
        'allowance. "at risk" marks a share above 80 % (our own convention). For a '
        "maximum rate (≤), worst case is how far the fastest it may run, budget included, "
        "sits from the limit; share is that rate as a part of the limit."
    )
    return (
        "## Error budget per peripheral\n\n"
        + _table(header, rows)
        + "\n\n"
        + note
        + "\n\nWhere each allowance comes from:\n\n"
        + basis
    )
