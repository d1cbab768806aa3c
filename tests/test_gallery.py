"""Every demo board in scenarios/ solves to a proven optimum that the evaluator confirms."""

from pathlib import Path

import pytest

from clockplan.evaluate import evaluate_plan
from clockplan.scenario import load_scenario
from clockplan.solve import Status, search

SCENARIOS = sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml"))


def test_the_gallery_has_at_least_five_boards():
    assert len(SCENARIOS) >= 5


@pytest.mark.parametrize("path", SCENARIOS, ids=[path.stem for path in SCENARIOS])
def test_gallery_board_solves_and_re_checks(path):
    text = path.read_text(encoding="utf-8")
    assert text.startswith("#"), "each demo board opens with a comment saying what it shows"
    scenario = load_scenario(path)
    result = search(scenario, top=1, time_limit=120)
    assert result.status is Status.OPTIMAL
    best = result.plans[0]
    evaluation = evaluate_plan(scenario, best.plan)
    assert evaluation.violations == ()
    assert evaluation.feasible
    assert evaluation.clocks == best.evaluation.clocks
