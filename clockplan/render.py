"""Rich tables for the terminal. Library code never prints; commands hand these to a console."""

from __future__ import annotations

from fractions import Fraction

from rich.console import JustifyMethod
from rich.table import Table
from rich.text import Text

from clockplan.compare import Change, Side
from clockplan.evaluate import RateCheck
from clockplan.quantities import format_hz, format_relative
from clockplan.result import STATUS_WORDS, Explanation, RankedPlan, SearchResult
from clockplan.scenario import Scenario
from clockplan.text import format_rate, format_share, limit_text, proof_text
from clockplan.text_safety import printable

__all__ = [
    "ranking_table",
    "rates_table",
    "status_line",
    "share_text",
    "explanation_text",
    "budget_table",
    "changes_table",
]


def status_line(result: SearchResult) -> Text:
    """What the search proved, how long the whole run took, and the ranking order used."""
    words = STATUS_WORDS[result.status]
    if result.interrupted:
        words = "stopped by Ctrl-C: the best plans found so far, not proved"
    style = {"optimal": "bold green", "feasible": "yellow"}.get(result.status.value, "bold red")
    line = Text.assemble(("Status: ", "bold"), (words, style), f"   {result.elapsed:.2f} s")
    cut = [ranked for ranked in result.plans if ranked.unproved]
    if cut:
        first = cut[0]
        line.append(
            f"\n  rank {first.rank}: not proved: {', '.join(first.unproved)}", style="yellow"
        )
    elif result.time_limited and not result.interrupted and result.plans:
        line.append("\n  the time limit stopped the search for further ranks", style="yellow")
    elif result.exhausted and result.plans:
        line.append("\n  no other oscillator choice has a plan (proved)")
    line.append(f"\n  ranked by, in order: {', '.join(result.order)}", style="dim")
    return line


def share_text(share: Fraction) -> Text:
    """A share of an allowance as a percentage, coloured by how close to failing it is."""
    style = "green" if share <= Fraction(1, 2) else "yellow" if share <= 1 else "bold red"
    return Text(format_share(share), style=style)


def ranking_table(result: SearchResult) -> Table:
    """The ranked plans, one row per choice of oscillator frequencies; consecutive ranks that
    give every rate the same figures share one row that lists their choices."""
    scenario = result.scenario
    fixed = [source for source in scenario.sources if len(source.candidates) == 1]
    chosen = [source.name for source in scenario.sources if len(source.candidates) > 1]
    caption = ", ".join(f"{source.name} {format_hz(source.candidates[0])}" for source in fixed)
    costs = any(source.cost is not None for source in scenario.sources)
    table = Table(
        title=Text(f"{printable(scenario.title)}: ranked clock plans"),
        title_justify="left",
        caption=f"fixed oscillators: {caption}" if caption else None,
        caption_justify="left",
    )
    table.add_column("#", justify="right")
    table.add_column(", ".join(chosen) or "oscillators")
    table.add_column("worst share", justify="right")
    table.add_column("worst error", justify="right")
    table.add_column("limited by")
    if costs:
        table.add_column("cost", justify="right")
    table.add_column("fastest clocks")
    table.add_column("proof")
    fastest = [d.name for d in scenario.dividers if d.fastest]
    for group in _equivalent_runs(result.plans):
        first, last = group[0], group[-1]
        evaluation = first.evaluation
        worst = evaluation.worst
        oscillators = _choices_text([_choice_text(ranked, chosen) for ranked in group])
        clocks = (
            ", ".join(f"{name} {format_hz(evaluation.clocks[name])}" for name in fastest) or "-"
        )
        ranks = str(first.rank) if first is last else f"{first.rank}–{last.rank}"
        table.add_row(
            ranks,
            oscillators,
            share_text(evaluation.worst_share),
            format_relative(worst.worst_case) if worst else "-",
            f"{worst.requirement.peripheral} ({worst.requirement.label})" if worst else "-",
            *([_cost_text(scenario, first)] if costs else []),
            clocks,
            "; ".join(dict.fromkeys(proof_text(ranked) for ranked in group)),
        )
    return table


def _rate_figures(ranked: RankedPlan) -> tuple[tuple[Fraction, Fraction], ...]:
    """What a reader compares between plans: each rate's achieved value and worst case."""
    return tuple((check.achieved, check.worst_case) for check in ranked.evaluation.checks)


def _equivalent_runs(plans: tuple[RankedPlan, ...]) -> list[list[RankedPlan]]:
    """Consecutive ranks grouped while every rate's figures stay the same."""
    runs: list[list[RankedPlan]] = []
    for ranked in plans:
        if runs and _rate_figures(runs[-1][0]) == _rate_figures(ranked):
            runs[-1].append(ranked)
        else:
            runs.append([ranked])
    return runs


def _choice_text(ranked: RankedPlan, chosen: list[str]) -> str:
    """The plan's oscillators with a choice, "not used" for one that feeds nothing."""
    texts = [
        format_hz(ranked.plan.sources[name]) if name in ranked.choice else "not used"
        for name in chosen
    ]
    return ", ".join(texts) or "-"


def _choices_text(texts: list[str]) -> str:
    """Several plans' choices in one cell: ``"4, 5, 6 MHz"`` when they share a unit and each
    is one frequency, else separated by semicolons."""
    units = {text.rpartition(" ")[2] for text in texts}
    if len(texts) > 1 and len(units) == 1 and all(", " not in text for text in texts):
        unit = units.pop()
        return ", ".join(text.removesuffix(f" {unit}") for text in texts) + f" {unit}"
    return "; ".join(texts)


def _cost_text(scenario: Scenario, ranked: RankedPlan) -> str:
    """The cost of the oscillators the plan uses, as the scenario writes costs."""
    parts = [scenario.source(name).cost for name in ranked.choice]
    if any(part is None for part in parts):
        return "-"
    return f"{float(sum(part for part in parts if part is not None)):g}"


def budget_table(result: SearchResult, ranked: RankedPlan) -> Table:
    """Each oscillator the plan uses, with its error budget: its terms, the worst case (sum)
    and the RSS."""
    table = Table(title=f"Plan {ranked.rank}: oscillator budgets", title_justify="left")
    headers = ("source", "kind", "frequency", "initial", "temp.", "aging", "pulling", "sum", "RSS")
    for name in headers:
        table.add_column(name, justify="left" if name in ("source", "kind") else "right")
    used = ranked.choice or ranked.plan.sources
    for name, frequency in ranked.plan.sources.items():
        if name not in used:
            continue
        source = result.scenario.source(name)
        terms = source.terms
        table.add_row(
            name,
            source.kind,
            format_hz(frequency),
            *(
                format_relative(terms[key])
                for key in ("tolerance", "stability", "aging", "pulling")
            ),
            format_relative(source.budget),
            format_relative(source.budget_rss),
        )
    return table


def rates_table(ranked: RankedPlan) -> Table:
    """Every required rate of one plan: achieved, error, budget, allowance, margin."""
    table = Table(title=f"Plan {ranked.rank}: every required rate", title_justify="left")
    columns: tuple[tuple[str, JustifyMethod], ...] = (
        ("peripheral", "left"),
        ("rate", "left"),
        ("achieved", "right"),
        ("error", "right"),
        ("worst case", "right"),
        ("allowance", "right"),
        ("share", "right"),
        ("", "left"),
    )
    for name, justify in columns:
        table.add_column(name, justify=justify)
    for check in ranked.evaluation.checks:
        table.add_row(*_rate_cells(check))
    return table


def _rate_cells(check: RateCheck) -> list[str | Text]:
    requirement = check.requirement
    mark = Text("pass", style="green") if check.passes else Text("FAIL", style="bold red")
    label = (
        f"{requirement.label} ({check.option.label})" if check.option.label else requirement.label
    )
    return [
        requirement.peripheral,
        label,
        format_rate(check.achieved, requirement.unit),
        format_relative(check.error, signed=True),
        format_relative(check.worst_case, signed=requirement.ceiling),
        limit_text(check),
        share_text(check.share),
        mark,
    ]


def explanation_text(explanation: Explanation) -> Text:
    """Why no plan fits, in words: the conflicting limits and how far each must move."""
    if not explanation.conflict:
        return Text(
            "No plan fits, and no set of limits explains it: no setting brings every rate "
            "within 50 % of its target.",
            style="bold red",
        )
    minimal = (
        "" if explanation.minimal else " (the time limit stopped the search for a smaller set)"
    )
    text = Text("These limits cannot all hold together" + minimal + ":\n", style="bold red")
    for limit in explanation.conflict:
        text.append(f"  - {limit}\n")
    text.append("Closest plans with one limit let go:\n", style="bold")
    for relaxation in explanation.relaxations:
        text.append(f'  - without "{relaxation.limit}": {relaxation.advice}\n')
    if explanation.beyond_sources:
        text.append(
            "No setting can save these rates; their oscillators alone are too loose:\n",
            style="bold",
        )
        for line in explanation.beyond_sources:
            text.append(f"  - {line}\n")
    text.rstrip()
    return text


def changes_table(a: Side, b: Side, changes: tuple[Change, ...]) -> Table:
    """The changes as a table, node by node; a node's name is shown on its first row only."""
    table = Table(title="What changed from plan A to plan B", title_justify="left")
    table.add_column("node")
    table.add_column("what")
    for label, side in (("A", a), ("B", b)):
        which = "closest" if side.closest else f"rank {side.ranked.rank}"
        table.add_column(f"{label}: {which}", justify="right")
    previous = None
    for change in changes:
        what = f"{change.aspect} {change.item}".strip()
        table.add_row(
            change.node if change.node != previous else "", what, change.a_text, change.b_text
        )
        previous = change.node
    return table
