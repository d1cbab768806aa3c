"""Rich tables for the terminal. Library code never prints; commands hand these to a console."""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from rich.console import Console, ConsoleOptions, JustifyMethod, RenderResult
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

from clockplan.compare import Change, Side
from clockplan.evaluate import RateCheck
from clockplan.phrases import Phrases, listed
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
    "sides_text",
]


WIDEST = 10_000
"""A width no table reaches: to measure how wide a table wants to be."""


@dataclass(frozen=True)
class Grid:
    """A table's content, drawn wide when the terminal allows and stacked when it does not.

    Stacked, each group of ``stack`` becomes one column whose cells hold the group's values
    one under the other (its header joins theirs with " / "), so a narrow terminal folds
    no number and cuts nothing with an ellipsis.
    """

    title: str | Text
    columns: tuple[tuple[str, JustifyMethod], ...]
    rows: tuple[tuple[str | Text, ...], ...]
    stack: tuple[tuple[int, ...], ...] = ()
    caption: str | None = None

    def table(self, *, stacked: bool) -> Table:
        """The grid as a rich table, wide or stacked."""
        groups = _groups(len(self.columns), self.stack if stacked else ())
        table = Table(
            title=self.title, title_justify="left", caption=self.caption, caption_justify="left"
        )
        for group in groups:
            header = " / ".join(self.columns[index][0] for index in group if self.columns[index][0])
            table.add_column(header, justify=self.columns[group[0]][1], overflow="fold")
        for row in self.rows:
            table.add_row(*(_stacked_cell([row[index] for index in group]) for group in groups))
        return table

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        wide = self.table(stacked=False)
        unbounded = options.update(width=WIDEST, max_width=WIDEST)
        fits = Measurement.get(console, unbounded, wide).maximum <= options.max_width
        yield wide if fits or not self.stack else self.table(stacked=True)


def _groups(count: int, stack: tuple[tuple[int, ...], ...]) -> list[tuple[int, ...]]:
    """Every column index once, in order, the stacked ones grouped."""
    grouped = {group[0]: group for group in stack}
    inside = {index for group in stack for index in group}
    return [
        grouped.get(index, (index,))
        for index in range(count)
        if index in grouped or index not in inside
    ]


def _stacked_cell(cells: list[str | Text]) -> str | Text:
    """Several cells as one, each on its own line."""
    if len(cells) == 1:
        return cells[0]
    joined = Text()
    for position, cell in enumerate(cells):
        if position:
            joined.append("\n")
        joined.append(cell if isinstance(cell, Text) else Text(cell))
    return joined


def status_line(result: SearchResult) -> Phrases:
    """What the search proved, how long the whole run took, and the ranking order used."""
    words = STATUS_WORDS[result.status]
    if result.interrupted:
        words = "stopped by Ctrl-C: the best plans found so far, not proved"
    style = {"optimal": "bold green", "feasible": "yellow"}.get(result.status.value, "bold red")
    lines: list[tuple[Text, ...]] = [
        (Text.assemble(("Status: ", "bold"), (words, style)), Text(f"   {result.elapsed:.2f} s"))
    ]
    cut = [ranked for ranked in result.plans if ranked.unproved]
    if cut:
        first = cut[0]
        stages = listed(first.unproved)
        lines.append(
            _styled((Text(f"  rank {first.rank}: not proved: ") + stages[0], *stages[1:]), "yellow")
        )
    elif result.time_limited and not result.interrupted and result.plans:
        lines.append((Text("  the time limit stopped the search for further ranks", "yellow"),))
    elif result.exhausted and result.plans:
        lines.append((Text("  no other oscillator choice has a plan (proved)"),))
    order = listed(result.order)
    lines.append(_styled((Text("  ranked by, in order: ") + order[0], *order[1:]), "dim"))
    return Phrases(tuple(lines))


def _styled(phrases: tuple[Text, ...], style: str) -> tuple[Text, ...]:
    for phrase in phrases:
        phrase.stylize(style)
    return phrases


def share_text(share: Fraction) -> Text:
    """A share of an allowance as a percentage, coloured by how close to failing it is."""
    style = "green" if share <= Fraction(1, 2) else "yellow" if share <= 1 else "bold red"
    return Text(format_share(share), style=style)


def ranking_table(result: SearchResult) -> Grid:
    """The ranked plans, one row per choice of oscillator frequencies; consecutive ranks that
    give every rate the same figures share one row that lists their choices."""
    scenario = result.scenario
    fixed = [source for source in scenario.sources if len(source.candidates) == 1]
    chosen = [source.name for source in scenario.sources if len(source.candidates) > 1]
    caption = ", ".join(f"{source.name} {format_hz(source.candidates[0])}" for source in fixed)
    costs = any(source.cost is not None for source in scenario.sources)
    columns: list[tuple[str, JustifyMethod]] = [
        ("#", "right"),
        (", ".join(chosen) or "oscillators", "left"),
        ("worst share", "right"),
        ("worst error", "right"),
        ("limited by", "left"),
    ]
    if costs:
        columns.append(("cost", "right"))
    columns += [("fastest clocks", "left"), ("proof", "left")]
    fastest = [d.name for d in scenario.dividers if d.fastest]
    rows: list[tuple[str | Text, ...]] = []
    for group in _equivalent_runs(result.plans):
        first, last = group[0], group[-1]
        evaluation = first.evaluation
        worst = evaluation.worst
        oscillators = _choices_text([_choice_text(ranked, chosen) for ranked in group])
        clocks = (
            ", ".join(f"{name} {format_hz(evaluation.clocks[name])}" for name in fastest) or "-"
        )
        ranks = str(first.rank) if first is last else f"{first.rank}–{last.rank}"
        rows.append(
            (
                ranks,
                oscillators,
                share_text(evaluation.worst_share),
                format_relative(worst.worst_case) if worst else "-",
                f"{worst.requirement.peripheral} ({worst.requirement.label})" if worst else "-",
                *([_cost_text(scenario, first)] if costs else []),
                clocks,
                "; ".join(dict.fromkeys(proof_text(ranked) for ranked in group)),
            )
        )
    return Grid(
        Text(f"{printable(scenario.title)}: ranked clock plans"),
        tuple(columns),
        tuple(rows),
        stack=((2, 3),),
        caption=f"fixed oscillators: {caption}" if caption else None,
    )


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


def budget_table(result: SearchResult, ranked: RankedPlan) -> Grid:
    """Each oscillator the plan uses, with its error budget: its terms, the worst case (sum)
    and the RSS."""
    headers = ("source", "kind", "frequency", "initial", "temp.", "aging", "pulling", "sum", "RSS")
    columns = tuple((name, _side(name in ("source", "kind"))) for name in headers)
    used = ranked.choice or ranked.plan.sources
    rows = []
    for name, frequency in ranked.plan.sources.items():
        if name not in used:
            continue
        source = result.scenario.source(name)
        terms = source.terms
        rows.append(
            (
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
        )
    return Grid(
        f"Plan {ranked.rank}: oscillator budgets",
        columns,
        tuple(rows),
        stack=((0, 1), (3, 4), (5, 6), (7, 8)),
    )


def _side(left: bool) -> JustifyMethod:
    return "left" if left else "right"


def rates_table(ranked: RankedPlan) -> Grid:
    """Every required rate of one plan: achieved, error, budget, allowance, margin."""
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
    rows = tuple(tuple(_rate_cells(check)) for check in ranked.evaluation.checks)
    return Grid(
        f"Plan {ranked.rank}: every required rate",
        columns,
        rows,
        stack=((0, 1), (2, 3), (4, 5)),
    )


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
        check.worst_case_text,
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


def sides_text(a: Side, b: Side) -> Phrases:
    """Which plans are compared: each side's title and file, then its rank and status; a
    narrow terminal breaks a line before the file's name, not inside it."""
    lines = []
    for label, side in (("A", a), ("B", b)):
        which = (
            "no plan meets every allowance (proved); its closest plan"
            if side.closest
            else f"rank {side.ranked.rank}"
        )
        title = Text(printable(f"{label}: {side.scenario.title}"))
        lines.append((title, Text(printable(f" ({side.scenario.file})"))))
        lines.append((Text(f"   {which},"), Text(f" {side.ranked.status.value}")))
    return Phrases(tuple(lines), hanging=3)


def changes_table(a: Side, b: Side, changes: tuple[Change, ...]) -> Grid:
    """The changes as a table, node by node; a node's name is shown on its first row only.
    On a narrow terminal plan A's value stands above plan B's in one column."""
    columns: list[tuple[str, JustifyMethod]] = [("node", "left"), ("what", "left")]
    for label, side in (("A", a), ("B", b)):
        which = "closest" if side.closest else f"rank {side.ranked.rank}"
        columns.append((f"{label}: {which}", "right"))
    rows = []
    previous = None
    for change in changes:
        what = f"{change.aspect} {change.item}".strip()
        node = change.node if change.node != previous else ""
        rows.append((node, what, change.a_text, change.b_text))
        previous = change.node
    return Grid("What changed from plan A to plan B", tuple(columns), tuple(rows), stack=((2, 3),))
