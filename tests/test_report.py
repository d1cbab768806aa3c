"""The Markdown report: the job, an honest status, the ranking, the tree, the budget, cautions."""

from __future__ import annotations

import re
from dataclasses import replace

import pytest

from clockplan.report import CAUTIONS, report_text
from clockplan.result import SearchResult, Status
from tests.helpers import bench_ranked, result_of


def bench_result(status: Status = Status.OPTIMAL) -> SearchResult:
    scenario, ranked = bench_ranked()
    ranked = replace(ranked, status=status)
    return result_of(
        scenario,
        ranked,
        status=status,
        order=("worst share", "smallest settings"),
        time_limited=status is Status.FEASIBLE,
    )


def table_rows(text: str, heading: str) -> list[list[str]]:
    """The cells of the first table under ``heading`` (escaped pipes stay inside cells)."""
    section = text.split(f"## {heading}\n", 1)[1].split("\n## ", 1)[0]
    rows = [line for line in section.splitlines() if line.startswith("|")]
    return [[cell.strip() for cell in re.split(r"(?<!\\)\|", row)[1:-1]] for row in rows]


def test_report_of_the_default_plan(default_scenario, default_best):
    result = default_best
    text = report_text(result, result.plans[0])
    assert text.startswith("# Clock plan: Weather-station hub, rev A\n")
    assert "optimal (every stage proved)" in text
    assert str(default_scenario.file) in text
    ranking = table_rows(text, "Ranked plans")
    assert len(ranking) == 2 + len(result.plans)  # header, rule, one row per plan
    assert ranking[2][0] == "**1**"  # the chosen plan stands out
    sources = table_rows(text, "Error budget per oscillator")
    assert sources[0] == [
        "oscillator",
        "kind",
        "frequency",
        "tolerance",
        "stability",
        "aging",
        "pulling",
        "worst case",
        "RSS",
    ]
    main = next(row for row in sources if row[0] == "main")
    assert main[3:] == ["20 ppm", "30 ppm", "10 ppm", "0 ppm", "60 ppm", "37.417 ppm"]
    for name in ("main", "system", "core", "bus", "usb_clock", "usb", "console", "clock_tick"):
        assert f"**{name.replace('_', chr(92) + '_')}**" in text  # every node in the tree


def test_every_table_row_has_as_many_cells_as_its_header():
    scenario, ranked = bench_ranked()
    text = report_text(bench_result(), ranked)
    for heading in ("Ranked plans", "Settings", "Error budget per oscillator"):
        rows = table_rows(text, heading)
        assert {len(row) for row in rows} == {len(rows[0])}, heading
    peripherals = table_rows(text, "Error budget per peripheral")
    assert {len(row) for row in peripherals} == {len(peripherals[0])}
    verdicts = {row[1]: row[-1] for row in peripherals[2:]}
    assert verdicts == {
        "48 MHz clock": "fail",
        "28 MHz": "at risk",
        "9600 baud": "pass",
        "1 Hz tick": "pass",
    }


@pytest.mark.parametrize("status", [Status.FEASIBLE, Status.OPTIMAL])
def test_optimal_only_when_proved(status):
    _, ranked = bench_ranked()
    result = bench_result(status)
    text = report_text(result, result.plans[0])
    assert ("optimal" in text) is (status is Status.OPTIMAL)
    if status is Status.FEASIBLE:
        assert "not proved" in text


def test_cautions_and_failures_are_spelled_out():
    result = bench_result()
    text = report_text(result, result.plans[0])
    assert "**does not meet every allowance**" in text
    cautions = text.split("## Cautions\n", 1)[1]
    for caution in CAUTIONS:
        assert caution in cautions
    for words in ("load capacitance", "drive level", "start-up", "Prototype before production"):
        assert words in cautions


def test_title_is_escaped_for_markdown():
    result = bench_result()
    first_line = report_text(result, result.plans[0]).splitlines()[0]
    assert first_line == r'# Clock plan: Bench rig \<A&B\> "quoted" \*/ end \\ back'
