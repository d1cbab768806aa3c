"""The evaluator's verdicts, fault by fault: each broken plan is named, never a crash.

Each test starts from the bundled board's best plan (set by hand in tests/helpers.py, the
plan the search proves best), breaks one thing, and requires the evaluator to say so in a
violation or a failing rate.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from clockplan.evaluate import evaluate_plan
from clockplan.plan import Plan
from clockplan.scenario import load_scenario
from clockplan.solve import search


@pytest.fixture(scope="module")
def best(default_best):
    return default_best.plans[0].plan


def _broken(best: Plan, **settings) -> Plan:
    return replace(best, settings={**best.settings, **settings})


def test_the_proved_plan_has_no_violation(default_scenario, best):
    assert evaluate_plan(default_scenario, best).feasible


@pytest.mark.parametrize(
    ("key", "value"),
    [
        ("core.divide", 0),  # not allowed, and a division by zero if it were used
        ("core.divide", -2),
        ("core.divide", 10**9),
        ("core.divide", True),  # a bool is not a count
        ("core.divide", "2"),
        ("system.multiplier", 10**6),
        ("system.reference_divider", 0),
    ],
)
def test_a_setting_outside_its_range_is_a_violation(default_scenario, best, key, value):
    evaluation = evaluate_plan(default_scenario, _broken(best, **{key: value}))
    assert any(v.startswith(f"{key}: ") for v in evaluation.violations)
    assert not evaluation.feasible


def test_a_missing_setting_is_a_violation_not_a_key_error(default_scenario, best):
    for key in best.settings:
        settings = {k: v for k, v in best.settings.items() if k != key}
        evaluation = evaluate_plan(default_scenario, replace(best, settings=settings))
        if evaluation.feasible:  # only a setting with one allowed value may be left out
            continue
        assert any(v.startswith(f"{key}: ") for v in evaluation.violations), key


def test_a_missing_oscillator_is_a_violation(default_scenario, best):
    for name in best.sources:
        sources = {k: v for k, v in best.sources.items() if k != name}
        evaluation = evaluate_plan(default_scenario, replace(best, sources=sources))
        assert f"{name}: the plan gives this oscillator no frequency" in evaluation.violations


def test_an_oscillator_off_its_candidates_is_a_violation(default_scenario, best):
    name, hertz = next(iter(best.sources.items()))
    evaluation = evaluate_plan(
        default_scenario, replace(best, sources={**best.sources, name: hertz + 1})
    )
    assert any("is not among its candidates" in v for v in evaluation.violations)


def test_a_vco_out_of_range_is_named(default_scenario, best):
    # The bundled board's PLL: pushing the multiplier to its largest allowed value
    # drives the VCO past its top (or the PFD check still names the PLL).
    pll = default_scenario.plls[0]
    broken = _broken(best, **{f"{pll.name}.multiplier": max(pll.multiplier)})
    evaluation = evaluate_plan(default_scenario, broken)
    assert any(v.startswith(f"{pll.name} VCO at ") for v in evaluation.violations)


def test_a_rate_at_half_its_target_fails_its_allowance(default_scenario, best):
    key = next(k for k in best.settings if k.startswith("console.divisor"))
    evaluation = evaluate_plan(default_scenario, _broken(best, **{key: best.settings[key] * 2}))
    check = next(c for c in evaluation.checks if c.requirement.setting == key)
    assert evaluation.violations == ()
    assert not check.passes
    assert not evaluation.feasible


@pytest.fixture(scope="module")
def gateway():
    scenario = load_scenario(Path(__file__).parent.parent / "scenarios" / "factory-gateway.toml")
    return scenario, search(scenario, top=1).plans[0].plan


@pytest.mark.parametrize("index", [7, -1, 10**6, True, "6"])
def test_a_can_timing_option_past_the_list_is_a_violation(gateway, index):
    # The CAN bus rate offers 7 bit timings (options 0..6): any other index is named.
    scenario, best = gateway
    key = "fieldbus.bit_divisor_option"
    evaluation = evaluate_plan(scenario, _broken(best, **{key: index}))
    assert any(v.startswith(f"{key}: ") for v in evaluation.violations), evaluation.violations
    assert not evaluation.feasible


def test_the_gateway_plan_has_no_violation(gateway):
    scenario, best = gateway
    assert evaluate_plan(scenario, best).feasible
