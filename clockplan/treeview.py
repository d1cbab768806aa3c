"""The chosen plan as a rich ``Tree`` for the terminal: each oscillator and what it feeds.

Every clock shows its frequency and setting; every peripheral rate shows what it
achieves, its error, its worst case against the allowance, the margin left and a
mark: pass, at risk (worst case above 80 % of the allowance, our own convention,
see :data:`clockplan.graphs.AT_RISK_SHARE`) or FAIL. A maximum rate (SPI, SD, I2C)
shows how close the fastest it may run, budget included, comes to its limit. A mux
hangs under the input it chose; under its other inputs a dim line says it was not chosen.
"""

from __future__ import annotations

from rich.text import Text
from rich.tree import Tree

from clockplan.evaluate import RateCheck
from clockplan.peripherals import Peripheral
from clockplan.phrases import Phrases, listed
from clockplan.plan import Plan
from clockplan.quantities import format_hz, format_relative
from clockplan.result import RankedPlan
from clockplan.scenario import Scenario
from clockplan.text import (
    AT_RISK,
    FAIL,
    format_rate,
    format_share,
    loop_text,
    rate_setting_text,
    rate_verdict,
    setting_text,
)
from clockplan.text_safety import printable
from clockplan.tree import clock_graph

__all__ = ["plan_tree", "verdict_text", "legend"]

_VERDICT_STYLE = {FAIL: ("FAIL", "bold red"), AT_RISK: ("at risk", "bold yellow")}


def verdict_text(verdict: str) -> Text:
    """A verdict as a short coloured word: pass, at risk, FAIL."""
    word, style = _VERDICT_STYLE.get(verdict, ("pass", "green"))
    return Text(f"[{word}]", style=style)


def legend() -> Phrases:
    """One line explaining the marks (broken only between marks on a narrow terminal)."""
    return Phrases(
        (
            (
                Text.assemble(
                    ("marks: ", "dim"),
                    verdict_text("pass"),
                    (" worst case inside the allowance", "dim"),
                ),
                Text.assemble(
                    "  ", verdict_text(AT_RISK), (" above 80 % of it (our own convention)", "dim")
                ),
                Text.assemble("  ", verdict_text(FAIL), (" outside it", "dim")),
            ),
        )
    )


def plan_tree(scenario: Scenario, ranked: RankedPlan) -> Tree:
    """The tree of ``ranked``: oscillators at the top, peripherals and their rates at the leaves."""
    graph = clock_graph(scenario)
    plan, evaluation = ranked.plan, ranked.evaluation
    root = Tree(
        Phrases(
            (
                (
                    Text(printable(scenario.title), style="bold"),
                    Text(f"  plan {ranked.rank} ({ranked.status.value})"),
                    Text.assemble("  worst share ", (format_share(evaluation.worst_share), "bold")),
                ),
            )
        ),
        guide_style="dim",
    )

    def grow(branch: Tree, name: str) -> None:
        peripheral = scenario.node(name)
        if isinstance(peripheral, Peripheral):
            checks = [c for c in evaluation.checks if c.requirement.peripheral == name]
            kind = Text(f"  {peripheral.kind}", style="dim")
            leaf = branch.add(Phrases(((Text(name, style="bold"), kind),)))
            for check in checks:
                leaf.add(_rate_phrases(check, plan))
            return
        details = listed(setting_text(scenario, plan, name).split(", "))
        if name in plan.sources:
            source = scenario.source(name)
            details = listed([source.kind, f"budget {format_relative(source.budget)}"])
            details = tuple(Text(phrase.plain, style="dim") for phrase in details)
        phrases = (
            Text(name, style="bold"),
            Text.assemble("  ", (format_hz(evaluation.clocks[name]), "cyan")),
            *_spaced(details, "  "),
            *_spaced(listed(loop_text(evaluation, name).split(", ")), "  "),
        )
        node = branch.add(Phrases((phrases,)))
        for child in graph.successors(name):
            if plan.mux_input(child) in (None, name):
                grow(node, child)
            else:
                node.add(Text(f"{child} (mux input, not chosen)", style="dim"))

    for source in scenario.sources:
        grow(root, source.name)
    return root


def _spaced(phrases: tuple[Text, ...], gap: str) -> tuple[Text, ...]:
    """Phrases whose first (when not empty) follows what comes before after ``gap``."""
    if not phrases or not phrases[0].plain:
        return ()
    return (Text(gap) + phrases[0], *phrases[1:])


def _rate_phrases(check: RateCheck, plan: Plan) -> Phrases:
    """A rate's verdict, label, achieved value and settings, then its figures below."""
    requirement = check.requirement
    figures = tuple(Text(phrase) for phrase in check.standing_phrases())
    settings = listed(rate_setting_text(check, plan).split(", "))
    what = (
        Text.assemble(verdict_text(rate_verdict(check)), " ", (requirement.label, "bold")),
        Text.assemble("  got ", (format_rate(check.achieved, requirement.unit), "cyan")),
        *(Text(phrase.plain, style="dim") for phrase in _spaced(settings, "  ")),
    )
    return Phrases((what, figures))
