"""Requirements with several options (own divisors and allowance) and ceiling rates."""

from dataclasses import replace
from fractions import Fraction

import pytest

from clockplan.errors import InternalError
from clockplan.evaluate import evaluate_plan
from clockplan.peripherals.base import (
    CeilingRate,
    Option,
    Options,
    Peripheral,
    Requirement,
    Stages,
    ToleranceRate,
    plain,
)
from clockplan.solve import Status, search
from tests.helpers import assert_plans_recheck, scenario_from
from tests.oracle import best_key

BOARD = """
[sources.main]
kind = "crystal"
choose = ["8 MHz", "10 MHz", "16 MHz", "20 MHz"]
[dividers.input_clock]
from = "main"
divide = [1, 2, 4]
"""


def with_requirements(*requirements: Requirement):
    scenario = scenario_from(BOARD)
    peripheral = Peripheral("bus", "test", "input_clock", requirements)
    return replace(scenario, peripherals=(peripheral,))


def option_rate() -> ToleranceRate:
    # Two ways to make 500 kbit/s: 8 quanta (loose divisors, tight allowance) or 16 quanta
    # (a wider allowance); the divisor is prescaler × quanta.
    eight = Option(range(8, 8 * 64 + 1, 8), Fraction(3, 1000), "8 tq", 8)
    sixteen = Option(range(16, 16 * 64 + 1, 16), Fraction(6, 1000), "16 tq", 16)
    return ToleranceRate(
        peripheral="bus",
        label="500 kbit/s",
        setting="bus.divisor",
        target=Fraction(500_000),
        allowance=Fraction(6, 1000),
        allowance_basis="test",
        divisor=Options((eight, sixteen)),
    )


def ceiling_rate(floor: Fraction | None = None) -> CeilingRate:
    return CeilingRate(
        peripheral="bus",
        label="SPI ≤ 3 MHz",
        setting="spi.divisor",
        maximum=Fraction(3_000_000),
        floor=floor,
        allowance_basis="test",
        divisor=plain((2, 4, 8, 16, 32)),
    )


@pytest.mark.parametrize(
    "requirements",
    [(option_rate(),), (option_rate(), ceiling_rate()), (ceiling_rate(), option_rate())],
    ids=["options", "options+ceiling", "ceiling+options"],
)
def test_options_and_ceilings_match_the_oracle(requirements):
    scenario = with_requirements(*requirements)
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    key, share = best_key(scenario, result.precisions)
    assert result.plans[0].worst_steps == key
    assert_plans_recheck(scenario, result)


def test_chosen_option_is_recorded_and_its_divisor_belongs_to_it():
    scenario = with_requirements(option_rate())
    for ranked in search(scenario, top=4).plans:
        (check,) = ranked.evaluation.checks
        index = ranked.plan.settings["bus.divisor_option"]
        assert check.option == option_rate().options[index]
        assert check.divisor % check.option.factor == 0


def test_ceiling_is_as_fast_as_allowed_with_the_budget():
    scenario = with_requirements(ceiling_rate())
    best = search(scenario, top=1).plans[0]
    (check,) = best.evaluation.checks
    budget = scenario.source("main").budget
    assert check.achieved * (1 + budget) <= 3_000_000
    # no candidate, divider and divisor reaches closer to the ceiling (brute force)
    fastest = max(
        Fraction(f) / k / d
        for f in (8_000_000, 10_000_000, 16_000_000, 20_000_000)
        for k in (1, 2, 4)
        for d in (2, 4, 8, 16, 32)
        if Fraction(f) / k / d * (1 + budget) <= 3_000_000
    )
    assert check.achieved == fastest
    assert best.evaluation.worst is None  # ceilings do not enter the worst share


def test_floor_that_no_divisor_can_meet_is_infeasible():
    scenario = with_requirements(ceiling_rate(floor=Fraction(2_990_000)))
    assert search(scenario, top=1).status is Status.INFEASIBLE


def timer_rate() -> ToleranceRate:
    # 1 kHz from the input_clock through a prescaler (1..64) and a reload count (1..256).
    return ToleranceRate(
        peripheral="bus",
        label="1 kHz tick",
        setting="timer.divisor",
        target=Fraction(1000),
        allowance=Fraction(1, 10**4),
        allowance_basis="test",
        divisor=Stages((("prescaler", range(1, 65)), ("reload", range(1, 257)))),
    )


def test_stages_multiply_to_the_divisor_and_match_the_oracle():
    scenario = with_requirements(timer_rate())
    result = search(scenario, top=2)
    assert result.status is Status.OPTIMAL
    assert result.plans[0].worst_steps == best_key(scenario, result.precisions)[0]
    for ranked in result.plans:
        settings = ranked.plan.settings
        (check,) = evaluate_plan(scenario, ranked.plan).checks
        assert (
            check.divisor == settings["timer.divisor.prescaler"] * settings["timer.divisor.reload"]
        )
        assert check.error == 0  # 8, 10, 16, 20 MHz ÷ 1, 2, 4 all divide to 1 kHz exactly


def test_a_divisor_with_no_option_is_refused():
    with pytest.raises(InternalError, match="at least one option"):
        Options(())
