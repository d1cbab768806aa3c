"""The closest plan of a board no plan fits, and diff comparing it with a board that fits.

"Is a ceramic resonator good enough for this board?" is answered by comparing the
crystal board's best plan with the ceramic board's closest one, rate by rate.
"""

from __future__ import annotations

import json
from pathlib import Path

from clockplan.cli import main
from clockplan.result import Status
from clockplan.scenario import default_scenario_path, load_scenario
from clockplan.solve import search

CERAMIC = Path(__file__).parent.parent / "scenarios" / "weather-hub-ceramic.toml"


def test_the_ceramic_board_has_no_plan_and_a_proved_closest_one():
    scenario = load_scenario(CERAMIC)
    assert search(scenario, top=1).status is Status.INFEASIBLE
    closest = search(scenario, top=1, closest=True)
    assert closest.closest and closest.status is Status.OPTIMAL
    evaluation = closest.plans[0].evaluation
    assert evaluation.violations == ()  # every hardware limit (PFD, VCO, maxima) still holds
    usb = next(check for check in evaluation.checks if check.requirement.peripheral == "usb")
    # The least worst case a rate can have is its source's budget (synthesis error 0):
    # worst = |e| + b(1 + e) >= b. The closest plan reaches it exactly.
    assert usb.worst_case == usb.source_budget
    assert usb.share == usb.source_budget / usb.allowance > 1
    assert not usb.passes


def test_the_closest_plan_is_the_same_with_one_worker_and_eight():
    scenario = load_scenario(CERAMIC)
    plans = [search(scenario, top=1, closest=True, workers=w).plans[0].plan for w in (1, 8)]
    assert plans[0] == plans[1]


def test_diff_compares_a_board_that_fits_with_one_that_does_not(capsys):
    status = main(["diff", str(default_scenario_path()), str(CERAMIC), "--json"])
    assert status == 0
    document = json.loads(capsys.readouterr().out)
    assert document["a"]["closest"] is False and document["a"]["meets_every_allowance"]
    assert document["b"]["closest"] is True and not document["b"]["meets_every_allowance"]
    verdicts = {
        (change["node"], change["item"]): (change["a"], change["b"])
        for change in document["changes"]
        if change["aspect"] == "verdict"
    }
    assert verdicts[("usb", "48 MHz clock")] == ("pass", "fail")


def test_diff_says_which_side_is_only_the_closest_plan(capsys):
    assert main(["diff", str(default_scenario_path()), str(CERAMIC)]) == 0
    out = capsys.readouterr().out
    assert "no plan meets every allowance (proved); its closest plan" in out
    assert "B: closest" in out
