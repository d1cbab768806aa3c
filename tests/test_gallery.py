"""Every demo board in scenarios/ solves to a proven optimum that the evaluator confirms.

A board that shows a failure (its opening comment says so) is proved to have no plan, and
its closest plan, the one the comparison shows, is the proven optimum instead.
"""

from pathlib import Path

import pytest

from clockplan.evaluate import evaluate_plan
from clockplan.scenario import load_scenario
from clockplan.solve import Status, search

SCENARIOS = sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml"))
NO_PLAN_FITS = {"weather-hub-ceramic"}
"""Boards written to show what fails: no plan meets every allowance."""


def test_the_gallery_has_at_least_five_boards():
    assert len(SCENARIOS) >= 5


def test_every_board_meant_to_fail_is_in_the_gallery():
    assert NO_PLAN_FITS <= {path.stem for path in SCENARIOS}


@pytest.mark.parametrize("path", SCENARIOS, ids=[path.stem for path in SCENARIOS])
def test_gallery_board_solves_and_re_checks(path):
    text = path.read_text(encoding="utf-8")
    assert text.startswith("#"), "each demo board opens with a comment saying what it shows"
    scenario = load_scenario(path)
    fails = path.stem in NO_PLAN_FITS
    result = search(scenario, top=1, time_limit=120)
    assert result.status is (Status.INFEASIBLE if fails else Status.OPTIMAL)
    if fails:
        assert "No plan meets every allowance" in text
        result = search(scenario, top=1, time_limit=120, closest=True)
        assert result.status is Status.OPTIMAL
    best = result.plans[0]
    evaluation = evaluate_plan(scenario, best.plan)
    assert evaluation.violations == ()
    assert evaluation.feasible is not fails
    assert evaluation.clocks == best.evaluation.clocks
