"""``clockplan diff``: what changed between two plans, node by node, exactly."""

from __future__ import annotations

import json
from dataclasses import replace
from fractions import Fraction

from clockplan.compare import Side, plan_changes
from clockplan.evaluate import evaluate_plan
from clockplan.scenario import default_scenario_path
from tests.helpers import BENCH_SETTINGS, bench_ranked, run_cli


def test_two_ranks_of_the_default_scenario_differ_in_the_oscillator(capsys):
    status, out, _ = run_cli(capsys, "diff", str(default_scenario_path()))
    assert status == 0
    assert "rank 1" in out and "rank 2" in out
    row = next(line for line in out.splitlines() if "oscillator" in line)
    assert "main" in row and row.count("MHz") == 2


def test_diff_json_names_the_changed_oscillator_exactly(capsys):
    status, out, _ = run_cli(capsys, "diff", str(default_scenario_path()), "--json")
    assert status == 0
    data = json.loads(out)
    assert (data["a"]["rank"], data["b"]["rank"]) == (1, 2)
    (oscillator,) = [c for c in data["changes"] if c["aspect"] == "oscillator"]
    assert oscillator["node"] == "main"
    assert Fraction(oscillator["a"]) != Fraction(oscillator["b"])
    assert all(c["node"] != "slow" for c in data["changes"])  # the watch crystal is fixed


def test_a_plan_against_itself_has_no_changes(capsys):
    path = str(default_scenario_path())
    status, out, _ = run_cli(capsys, "diff", path, "--rank-a", "1", "--rank-b", "1")
    assert status == 0
    assert "The two plans are the same." in out


BOARD = """
[sources.main]
kind = "oscillator"
choose = ["{main}"]
[dividers.core]
from = "main"
divide = "1..4"
max = "{core_max}"
goal = "fastest"
{extra}
"""


def test_two_files_with_different_nodes(capsys, tmp_path):
    first, second = tmp_path / "a.toml", tmp_path / "b.toml"
    first.write_text(BOARD.format(main="8 MHz", core_max="8 MHz", extra=""), encoding="utf-8")
    extra = '[dividers.slow_bus]\nfrom = "core"\ndivide = 2\n'
    second.write_text(BOARD.format(main="12 MHz", core_max="6 MHz", extra=extra), "utf-8")
    status, out, _ = run_cli(capsys, "diff", str(first), str(second), "--json")
    assert status == 0
    data = json.loads(out)
    assert (data["a"]["file"], data["b"]["file"]) == (str(first), str(second))
    changes = {(c["node"], c["aspect"], c["item"]): (c["a"], c["b"]) for c in data["changes"]}
    assert changes[("main", "oscillator", "")] == ("8000000", "12000000")
    assert changes[("core", "setting", "divide")] == (1, 2)
    assert changes[("core", "clock", "")] == ("8000000", "6000000")
    assert changes[("slow_bus", "clock", "")] == (None, "3000000")
    assert changes[("slow_bus", "setting", "divide")] == (None, 2)


def test_a_rank_that_does_not_exist_exits_2(capsys, tmp_path):
    path = tmp_path / "one.toml"
    path.write_text('[sources.main]\nkind = "oscillator"\nchoose = ["8 MHz"]\n', encoding="utf-8")
    status, _, err = run_cli(capsys, "diff", str(path))
    assert status == 2
    assert "--rank-b" in err and "only 1" in err


def test_changes_are_exact_and_node_by_node():
    scenario, ranked = bench_ranked()
    settings = {**BENCH_SETTINGS, "sd_clock.input": "usb_clock", "card.divide": 2}
    plan = replace(ranked.plan, settings=settings)
    other = replace(ranked, rank=2, plan=plan, evaluation=evaluate_plan(scenario, plan))
    changes = plan_changes(Side(scenario, ranked), Side(scenario, other))
    assert [(c.node, c.aspect, c.item) for c in changes] == [
        ("sd_clock", "clock", ""),
        ("sd_clock", "setting", "input"),
        ("card", "setting", "divide"),
        ("card", "achieved", "28 MHz"),
        ("card", "error", "28 MHz"),
        ("card", "share", "28 MHz"),
        ("card", "verdict", "28 MHz"),  # 24.5625 MHz misses 28 MHz: "at risk" becomes "fail"
    ]
    clock = changes[0]
    # 196.5 MHz / 7 through core, then 196.5 MHz / 4 through usb_clock
    assert (clock.a, clock.b) == ("196500000/7", "49125000")
    assert (changes[1].a, changes[1].b) == ("core", "usb_clock")
    assert changes[3].b == "24562500"  # 49.125 MHz ÷ 2
