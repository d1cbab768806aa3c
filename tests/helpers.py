"""What many test modules share: boards read from tests/boards/, plans set by hand, the CLI.

Output tests (tables, tree, report, picture, header) build their plans here by hand and
evaluate them exactly, so they need no search; ``tests/test_search.py`` checks that the
bundled board's hand-built plans are the ones the search finds.
"""

from __future__ import annotations

import os
import textwrap
from dataclasses import replace
from fractions import Fraction
from pathlib import Path
from typing import Any

import pytest

from clockplan.cli import main
from clockplan.evaluate import Evaluation, evaluate_plan
from clockplan.peripherals.base import largest
from clockplan.plan import Plan, SettingValue, divider_key, mux_key, pll_keys
from clockplan.result import RankedPlan, SearchResult, Stage, Status
from clockplan.scenario import Scenario, parse_scenario
from clockplan.settle import settle_settings

BOARDS = Path(__file__).parent / "boards"
"""Small boards of our own that several test modules use, one TOML file each."""

BENCH_SOURCES = {"main": Fraction(12_000_000), "slow": Fraction(32768)}
BENCH_SETTINGS: dict[str, SettingValue] = {
    "audio_pll.reference_divider": 1,
    "audio_pll.multiplier": 16,
    "audio_pll.fraction": 3,
    "core.divide": 7,
    "usb_clock.divide": 4,
    "sd_clock.input": "core",
    "usb.divide": 1,
    "card.divide": 1,
    "console.divisor_9600": 46784,
    "tick.chain": 32768,
}
"""A plan for boards/bench.toml with one rate failing, one at risk and two passing."""

DEFAULT_ORDER = (
    "worst share",
    "cost",
    "fastest clocks",
    "ceiling rates",
    "sum of shares",
    "sum of errors",
    "exact errors",
    "smallest settings",
)
"""The ranking order the search uses for the bundled board (it sets no ``rank_by``)."""

DEFAULT_STAGES = (
    Stage("worst share", True, 3462),
    Stage("fastest clocks", True, 120_000_000),
    Stage("sum of shares", True, 4860),
    Stage("sum of errors", True, 319_885),
    Stage("exact errors", True),
    Stage("smallest settings", True),
)
"""The stages the search proves for each of the bundled board's two best plans."""

_DEFAULT_BEST = Plan(
    {"main": Fraction(4_000_000), "slow": Fraction(32768)},
    {
        "system.reference_divider": 1,
        "system.multiplier": 60,
        "core.divide": 2,
        "usb_clock.divide": 5,
        "bus.divide": 2,
        "usb.divide": 1,
        "console.divisor_115200": 8336,
        "console.divisor_9600": 100000,
        "clock_tick.chain": 32768,
    },
)
DEFAULT_PLANS = (
    _DEFAULT_BEST,
    Plan(
        {**_DEFAULT_BEST.sources, "main": Fraction(5_000_000)},
        {**_DEFAULT_BEST.settings, "system.reference_divider": 2, "system.multiplier": 96},
    ),
)
"""The bundled board's two best plans, as ``search(default, top=2)`` ranks them."""


def scenario_from(text: str, name: str = "inline.toml") -> Scenario:
    """Parse a scenario written inline in a test."""
    return parse_scenario(textwrap.dedent(text), name)


def board_text(name: str) -> str:
    """The text of ``tests/boards/<name>.toml``."""
    return (BOARDS / f"{name}.toml").read_text(encoding="utf-8")


def board(name: str) -> Scenario:
    """``tests/boards/<name>.toml`` read as a scenario named ``<name>.toml``."""
    return parse_scenario(board_text(name), f"{name}.toml")


def ranked_by_hand(
    scenario: Scenario,
    plan: Plan,
    rank: int = 1,
    status: Status = Status.OPTIMAL,
    stages: tuple[Stage, ...] = (),
) -> RankedPlan:
    """A plan set by hand, evaluated exactly, as the search would rank it (no broken limit)."""
    evaluation = evaluate_plan(scenario, plan)
    assert evaluation.violations == ()
    return RankedPlan(rank, plan, evaluation, status, stages, dict(plan.sources))


def bench_ranked() -> tuple[Scenario, RankedPlan]:
    """The bench board with a plan set by hand (no search), evaluated exactly."""
    scenario = board("bench")
    return scenario, ranked_by_hand(scenario, Plan(dict(BENCH_SOURCES), dict(BENCH_SETTINGS)))


def default_result(scenario: Scenario) -> SearchResult:
    """The bundled board's two best plans set by hand, wrapped as a proved search result."""
    plans = tuple(
        ranked_by_hand(scenario, plan, rank, stages=DEFAULT_STAGES)
        for rank, plan in enumerate(DEFAULT_PLANS, start=1)
    )
    return SearchResult(scenario, Status.OPTIMAL, plans, DEFAULT_ORDER, 0.5, time_limited=False)


def result_of(
    scenario: Scenario, *plans: RankedPlan, status: Status = Status.OPTIMAL, **fields: Any
) -> SearchResult:
    """A search result around plans set by hand; ``fields`` set SearchResult's other fields."""
    result = SearchResult(scenario, status, plans, DEFAULT_ORDER, 0.25, time_limited=False)
    return replace(result, **fields)


def assert_plans_recheck(scenario: Scenario, result: SearchResult) -> list[Evaluation]:
    """Re-evaluate every ranked plan independently: no broken limit, every rate inside."""
    evaluations = [evaluate_plan(scenario, ranked.plan) for ranked in result.plans]
    for evaluation in evaluations:
        assert evaluation.violations == ()
        assert evaluation.feasible
    return evaluations


def run_cli(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run clockplan in-process; return the exit status, stdout and stderr."""
    status = main(list(argv))
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def sketch_ranked(scenario: Scenario) -> RankedPlan:
    """A plan for any board without a search, to exercise the views on every board: each
    oscillator at its first candidate, each clock setting at its largest value (the longest
    text), a mux on its first input and every rate settled for the clocks that result. It
    may break limits; the views draw it all the same."""
    settings: dict[str, SettingValue] = {}
    for pll in scenario.plls:
        reference, multiplier, fraction = pll_keys(pll.name)
        settings[reference] = largest(pll.reference_divider)
        settings[multiplier] = largest(pll.multiplier)
        if pll.fraction_bits:
            settings[fraction] = 2**pll.fraction_bits - 1
    for divider in scenario.dividers:
        settings[divider_key(divider.name)] = largest(divider.divide)
    for mux in scenario.muxes:
        settings[mux_key(mux.name)] = mux.inputs[0]
    sources = {source.name: source.candidates[0] for source in scenario.sources}
    clocks_only = evaluate_plan(scenario, Plan(sources, settings))
    settings |= settle_settings(scenario, clocks_only.clocks, clocks_only.roots)
    plan = Plan(sources, settings)
    return RankedPlan(1, plan, evaluate_plan(scenario, plan), Status.FEASIBLE, (), dict(sources))


SCREENS = Path(__file__).parent / "rendered" / "commands"
"""A command's whole screen at one width, recorded (CLOCKPLAN_WRITE_RENDERED=1 records anew)."""


def assert_screen_as_recorded(text: str, name: str, width: int) -> None:
    """``text`` fits ``width`` columns, no cell is cut with an ellipsis, and it is exactly the
    screen recorded as ``name`` at that width."""
    assert max(map(len, text.splitlines())) <= width
    assert "…" not in text
    path = SCREENS / f"{name}-{width}.txt"
    if os.environ.get("CLOCKPLAN_WRITE_RENDERED"):
        path.write_text(text, encoding="utf-8")
    assert text == path.read_text(encoding="utf-8")
