"""One truth per setting: the report's tree and its settings table show the same values.

Once the tree said ``bit_divisor = 16`` where the table said ``320`` for the same setting
(the table showed the count the search works in, the tree the value the peripheral holds).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from clockplan.report import report_text
from clockplan.scenario import load_scenario
from clockplan.solve import search

SCENARIOS = Path(__file__).parent.parent / "scenarios"


def _unescape(text: str) -> str:
    return re.sub(r"\\(.)", r"\1", text)


@pytest.mark.parametrize("board", ["factory-gateway.toml", "kinds-showcase.toml"])
def test_the_reports_tree_and_table_agree_on_every_rate_setting(board):
    result = search(load_scenario(SCENARIOS / board), top=1)
    ranked = result.plans[0]
    report = _unescape(report_text(result, ranked))
    table = dict(re.findall(r"^\| `([^`]+)` \| (.+?) \|$", report, flags=re.MULTILINE))
    compared = 0
    for check in ranked.evaluation.checks:
        peripheral = check.requirement.peripheral
        line = next(
            line
            for line in report.splitlines()
            if line.lstrip().startswith(f"- {check.requirement.label}:")
        )
        for name, value in re.findall(r"(\w+(?:\.\w+)?) = ([^,]+)", line):
            key = f"{peripheral}.{name}"
            assert table[key] == value, (key, line)
            compared += 1
    assert compared >= len(ranked.evaluation.checks)
