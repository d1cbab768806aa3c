"""The terminal tables and lines, exactly, at 80 and 120 columns, on plans set by hand.

Each case prints one renderable of ``clockplan.render`` to a plain (uncoloured, not a
terminal) console and compares every character with ``tests/rendered/<case>-<width>.txt``.
No search runs: the plans are built by hand and evaluated exactly. After a deliberate change
of output, ``CLOCKPLAN_WRITE_RENDERED=1 python -m pytest tests/test_render.py`` rewrites the
files (those cases then skip); read the diff before committing it.
"""

from __future__ import annotations

import io
import os
import re
from collections.abc import Callable
from dataclasses import replace
from fractions import Fraction
from pathlib import Path

import pytest
from rich.console import Console, RenderableType

from clockplan.compare import Side, plan_changes
from clockplan.plan import Plan
from clockplan.render import (
    budget_table,
    changes_table,
    explanation_text,
    ranking_table,
    rates_table,
    sides_text,
    status_line,
)
from clockplan.result import Explanation, Relaxation, Stage, Status
from clockplan.treeview import legend, plan_tree
from tests.helpers import (
    BENCH_SETTINGS,
    BENCH_SOURCES,
    bench_ranked,
    board,
    board_text,
    ranked_by_hand,
    result_of,
    scenario_from,
)

RENDERED = Path(__file__).parent / "rendered"
WIDTHS = (80, 120)

DESK_PLANS = (
    Plan(
        {"main": Fraction(8_000_000), "slow": Fraction(32768)},
        {
            "core.divide": 1,
            "console.divisor_115200": 1104,
            "display.divide": 4,
            "beeper.divide": 4,
            "seconds.chain": 32768,
        },
    ),
    Plan(
        {"main": Fraction(12_000_000), "slow": Fraction(32768)},
        {
            "core.divide": 2,
            "console.divisor_115200": 832,
            "display.divide": 4,
            "beeper.divide": 3,
            "seconds.chain": 32768,
        },
    ),
)
"""boards/desk_clock.toml's two plans: 8 MHz straight through, 12 MHz halved."""


def desk_result(cut: int | None = None, **fields):
    """Both desk-clock plans ranked; plan ``cut`` had its "fastest clocks" stage cut short."""
    scenario = board("desk_clock")
    ranked = []
    for rank, plan in enumerate(DESK_PLANS, start=1):
        proved = rank != cut
        stages = (Stage("worst share", True), Stage("fastest clocks", proved))
        status = Status.OPTIMAL if proved else Status.FEASIBLE
        ranked.append(ranked_by_hand(scenario, plan, rank, status, stages))
    return result_of(scenario, *ranked, **fields)


def bench_result(**fields):
    scenario, ranked = bench_ranked()
    return result_of(scenario, ranked, **fields)


def desk_sides() -> tuple[Side, Side]:
    """The desk clock's two plans, as ``clockplan diff`` compares ranks 1 and 2."""
    result = desk_result()
    return Side(result.scenario, result.plans[0]), Side(result.scenario, result.plans[1])


def long_named_sides() -> tuple[Side, Side]:
    """The desk clock's two plans with the console renamed long enough that the table of
    changes is too wide for 80 columns side by side."""
    name = "rear_panel_service_console"
    text = board_text("desk_clock").replace("peripherals.console", f"peripherals.{name}")
    scenario = scenario_from(text, "desk_clock.toml")
    sides = []
    for rank, plan in enumerate(DESK_PLANS, start=1):
        settings = {key.replace("console.", f"{name}."): v for key, v in plan.settings.items()}
        sides.append(Side(scenario, ranked_by_hand(scenario, Plan(plan.sources, settings), rank)))
    return sides[0], sides[1]


def bench_sides() -> tuple[Side, Side]:
    """The bench plan against one with the mux switched and the loop's fraction changed,
    read from a file with a long name, as the closest plan of a board with no plan."""
    scenario, ranked = bench_ranked()
    other = Plan(
        dict(BENCH_SOURCES),
        {**BENCH_SETTINGS, "sd_clock.input": "usb_clock", "audio_pll.fraction": 5},
    )
    far = replace(scenario, file="boards/revisions/bench-rig-with-the-second-loop-filter.toml")
    return Side(scenario, ranked), Side(far, ranked_by_hand(far, other), closest=True)


EXPLANATION = Explanation(
    conflict=("usb: 48 MHz within 500 ppm", "system VCO at most 400 MHz"),
    minimal=False,
    relaxations=(
        Relaxation("usb: 48 MHz within 500 ppm", "needs 2100 ppm: 48.1 MHz", None, None),
        Relaxation("system VCO at most 400 MHz", "needs 480 MHz: usb exact", None, None),
    ),
    beyond_sources=("beeper: the resonator's 5000 ppm budget is over its 1000 ppm allowance",),
)
"""A conflict of two limits written by hand: not minimal, with a rate no setting saves."""

CASES: dict[str, Callable[[], RenderableType]] = {
    "ranking-desk": lambda: ranking_table(desk_result(cut=2)),
    "ranking-bench": lambda: ranking_table(bench_result()),
    "rates-desk": lambda: rates_table(desk_result().plans[0]),
    "rates-bench": lambda: rates_table(bench_result().plans[0]),
    "budget-desk": lambda: budget_table(desk_result(), desk_result().plans[0]),
    "status-optimal": lambda: status_line(desk_result(exhausted=True)),
    "status-stage-cut": lambda: status_line(
        desk_result(cut=1, status=Status.FEASIBLE, time_limited=True, elapsed=12.5)
    ),
    "status-no-further-ranks": lambda: status_line(desk_result(time_limited=True)),
    "status-interrupted": lambda: status_line(desk_result(cut=2, interrupted=True)),
    "status-infeasible": lambda: status_line(
        result_of(board("desk_clock"), status=Status.INFEASIBLE, exhausted=True)
    ),
    "status-unknown": lambda: status_line(
        result_of(board("desk_clock"), status=Status.UNKNOWN, time_limited=True)
    ),
    "explanation": lambda: explanation_text(EXPLANATION),
    "explanation-empty": lambda: explanation_text(Explanation((), True, ())),
    "tree-desk": lambda: plan_tree(board("desk_clock"), desk_result().plans[0]),
    "tree-bench": lambda: plan_tree(*bench_ranked()),
    "legend": legend,
    "sides-desk": lambda: sides_text(*desk_sides()),
    "sides-bench": lambda: sides_text(*bench_sides()),
    "changes-desk": lambda: changes_table(*desk_sides(), plan_changes(*desk_sides())),
    "changes-bench": lambda: changes_table(*bench_sides(), plan_changes(*bench_sides())),
    "changes-long-names": lambda: changes_table(
        *long_named_sides(), plan_changes(*long_named_sides())
    ),
}


def rendered(renderable: RenderableType, width: int) -> str:
    """What a plain console of ``width`` columns prints, as rich's own tests capture it."""
    console = Console(
        file=io.StringIO(), width=width, color_system=None, legacy_windows=False, record=False
    )
    console.print(renderable)
    return console.file.getvalue()


@pytest.mark.parametrize("width", WIDTHS)
@pytest.mark.parametrize("case", sorted(CASES))
def test_output_is_exactly_as_recorded(case, width):
    text = rendered(CASES[case](), width)
    path = RENDERED / f"{case}-{width}.txt"
    if os.environ.get("CLOCKPLAN_WRITE_RENDERED"):
        path.write_text(text, encoding="utf-8")
        pytest.skip(f"rewrote {path.name}")
    assert text == path.read_text(encoding="utf-8")


def test_every_recorded_file_belongs_to_a_case():
    expected = {f"{case}-{width}.txt" for case in CASES for width in WIDTHS}
    assert {path.name for path in RENDERED.glob("*.txt")} == expected


def test_the_hand_built_desk_plans_evaluate_as_the_tables_say():
    # Worked out apart from the evaluator: the count 1104 is in 1/256ths of the divisor
    # (16x oversampling, 4 fraction bits), so the baud rate is 8 MHz / (16 x 1104/256) = / 69.
    first = desk_result().plans[0]
    checks = {check.requirement.peripheral: check for check in first.evaluation.checks}
    assert checks["console"].achieved == Fraction(8_000_000, 69)
    assert checks["display"].achieved == 2_000_000  # 8 MHz / 4 under the 3 MHz ceiling
    assert checks["seconds"].achieved == 1
    assert first.evaluation.worst.requirement.peripheral == "seconds"


def test_the_width_changes_the_wide_tables():
    for case in ("ranking-desk", "rates-desk", "budget-desk", "changes-long-names"):
        narrow, wide = (rendered(CASES[case](), width) for width in WIDTHS)
        assert narrow != wide, case
        assert max(map(len, narrow.splitlines())) <= 80
        assert max(map(len, wide.splitlines())) <= 120


CUT = re.compile(r"…(?! ?(?:[kMG]?Hz|Bd|[kM]?bit/s|ppm|%))")
"""An ellipsis that cuts a cell (rich's), not the one that marks a repeating decimal."""


@pytest.mark.parametrize("case", sorted(CASES))
def test_nothing_is_cut_with_an_ellipsis_at_80_columns(case):
    text = rendered(CASES[case](), 80)
    assert not CUT.search(text), text


BROKEN_FIGURE = re.compile(r"(?:=|\bof|\bgot|\berror|\bworst|\bmargin|\blimit|\bsum of) *$")
"""A line that ends where a figure should follow: a phrase broken in two."""


@pytest.mark.parametrize("case", sorted(CASES))
def test_no_figure_is_parted_from_its_name_at_80_columns(case):
    for line in rendered(CASES[case](), 80).splitlines():
        assert not BROKEN_FIGURE.search(line), line
