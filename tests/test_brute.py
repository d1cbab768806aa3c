"""The vectorised brute-force enumerator against the solver, the plain-loop oracle and counts."""

from __future__ import annotations

import math
import random
from fractions import Fraction

import numpy as np
import pytest

from benchmarks.enumerator import (
    STAGE_PRODUCTS,
    _Stages,
    enumerate_plans,
    exact_key,
    raw_combinations,
    tree_combinations,
)
from clockplan.evaluate import evaluate_plan
from clockplan.solve import Status, search
from tests.conftest import scenario_from
from tests.oracle import best_key

SMALL = {
    "pll-usb-uart": """
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "12 MHz", "25 MHz"]
        [plls.system]
        from = "main"
        reference_divider = "1..4"
        pfd = "1 MHz .. 5 MHz"
        multiplier = "24..36"
        vco = "96 MHz .. 240 MHz"
        [dividers.usb_clock]
        from = "system"
        divide = "2..5"
        [dividers.bus]
        from = "system"
        divide = "pow2 1..3"
        max = "80 MHz"
        [peripherals.usb]
        kind = "usb-full-speed"
        from = "usb_clock"
        [peripherals.console]
        kind = "uart"
        from = "bus"
        baud = [115200, 921600]
        divisor = "1..64"
        fraction_bits = 2
    """,
    "fractional-codec": """
        [sources.main]
        kind = "tcxo"
        choose = ["12 MHz", "13 MHz"]
        [plls.audio]
        from = "main"
        reference_divider = "1..2"
        pfd = "5 MHz .. 13 MHz"
        multiplier = "14..18"
        fraction_bits = 4
        vco = "150 MHz .. 220 MHz"
        [dividers.master]
        from = "audio"
        divide = "14..16"
        [peripherals.codec]
        kind = "clock"
        from = "master"
        rate = "12.288 MHz"
        allowance = "2000 ppm"
    """,
    "mux-two-sources": """
        [sources.main]
        kind = "crystal"
        choose = ["4 MHz", "6 MHz"]
        [sources.slow]
        kind = "tuning-fork"
        choose = ["32.768 kHz"]
        [dividers.fast]
        from = "main"
        divide = [1, 2, 4]
        [muxes.tick_input]
        from = ["fast", "slow"]
        [peripherals.tick]
        kind = "tick"
        from = "tick_input"
        chain = "pow2 10..15"
        allowance = "500 ppm"
    """,
    "options-stages-ceilings": """
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "16 MHz", "20 MHz"]
        tolerance = "10 ppm"
        stability = "10 ppm"
        aging = "5 ppm"
        [dividers.input_clock]
        from = "main"
        divide = "1..4"
        [peripherals.vehicle_bus]
        kind = "can"
        from = "input_clock"
        bitrate = "500 kHz"
        [peripherals.scheduler]
        kind = "timer"
        from = "input_clock"
        rate = "1 kHz"
        prescaler = "1..40"
        reload = "100..400"
        [peripherals.flash]
        kind = "spi"
        from = "input_clock"
        max = "3 MHz"
        min = "1 MHz"
    """,
}


@pytest.mark.parametrize("name", sorted(SMALL))
def test_enumerator_optimum_equals_the_solver_and_the_oracle(name):
    scenario = scenario_from(SMALL[name], f"{name}.toml")
    result = search(scenario, top=1, time_limit=30)
    enumeration = enumerate_plans(scenario, cap=60)
    oracle = best_key(scenario)
    assert result.status is Status.OPTIMAL
    assert enumeration.finished
    assert oracle is not None
    assert enumeration.best_key == result.plans[0].worst_steps == oracle[0]


@pytest.mark.parametrize("name", sorted(SMALL))
def test_the_enumerators_plan_is_feasible_and_scores_its_key(name):
    scenario = scenario_from(SMALL[name], f"{name}.toml")
    enumeration = enumerate_plans(scenario, cap=60)
    evaluation = evaluate_plan(scenario, enumeration.best_plan)
    assert evaluation.feasible
    assert exact_key(evaluation) == enumeration.best_key


@pytest.mark.parametrize("name", sorted(SMALL))
def test_a_finished_walk_accounts_for_every_combination(name):
    scenario = scenario_from(SMALL[name], f"{name}.toml")
    enumeration = enumerate_plans(scenario, cap=60)
    assert enumeration.checked == enumeration.total == tree_combinations(scenario)
    assert enumeration.projected == enumeration.elapsed


def test_no_feasible_plan_is_reported_as_none():
    text = SMALL["pll-usb-uart"].replace('"8 MHz", "12 MHz", "25 MHz"', '"7 MHz"')
    text = text.replace('multiplier = "24..36"', 'multiplier = "24..25"')
    scenario = scenario_from(text)
    enumeration = enumerate_plans(scenario, cap=60)
    assert enumeration.finished
    assert enumeration.best_key is None and enumeration.best_plan is None
    assert search(scenario, top=1).status is Status.INFEASIBLE


def test_raw_space_on_a_hand_counted_board():
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "12 MHz"]
        [plls.system]
        from = "main"
        reference_divider = "1..3"
        pfd = "1 MHz .. 12 MHz"
        multiplier = "10..14"
        fraction_bits = 2
        vco = "10 MHz .. 500 MHz"
        [dividers.bus]
        from = "system"
        divide = [1, 2, 4]
        [peripherals.console]
        kind = "uart"
        from = "bus"
        baud = [115200, 9600]
        divisor = "1..10"
        [peripherals.vehicle_bus]
        kind = "can"
        from = "bus"
        bitrate = "500 kHz"
        prescaler = "1..4"
        quanta = [16, 20]
        [peripherals.scheduler]
        kind = "timer"
        from = "bus"
        rate = "1 kHz"
        prescaler = "1..5"
        reload = "1..7"
    """)
    # By hand: 2 candidates × 3 reference dividers × 5 multipliers × 2**2 fractions × 3 bus
    # divisors = 360 tree combinations. Each baud has 10 divisors (×16 oversampling, still
    # 10 values). CAN: 16 tq × {1..4} ∪ 20 tq × {1..4} = {16, 32, 48, 64, 20, 40, 60, 80},
    # 8 divisors (the options' union). The timer: 5 × 7 = 35 stage combinations.
    assert tree_combinations(scenario) == 360
    assert raw_combinations(scenario) == 360 * 10 * 10 * 8 * 35


def test_the_cap_stops_the_walk_and_projects_the_whole_space():
    text = SMALL["pll-usb-uart"].replace(
        'choose = ["8 MHz", "12 MHz", "25 MHz"]',
        'choose = { from = "8 MHz", to = "26 MHz", step = "1 kHz" }',
    )
    text = text.replace('pfd = "1 MHz .. 5 MHz"', 'pfd = "1 MHz .. 5 MHz"\nfraction_bits = 12')
    scenario = scenario_from(text)
    enumeration = enumerate_plans(scenario, cap=0.5)
    assert not enumeration.finished
    assert 0 < enumeration.checked < enumeration.total
    assert enumeration.total == tree_combinations(scenario)
    assert enumeration.elapsed < enumeration.projected < math.inf
    assert enumeration.rate == enumeration.checked / enumeration.elapsed


def _products(first: range, second: range) -> np.ndarray:
    return np.unique(np.multiply.outer(np.array(first), np.array(second)).ravel())


@pytest.mark.parametrize("seed", range(3))
def test_large_stage_products_find_the_nearest_product_on_each_side(seed):
    prescaler, reload = range(1, 5), range(3, 65537, 2)  # 131 068 raw pairs: the large path
    stages = (("prescaler", prescaler), ("reload", reload))
    assert len(prescaler) * len(reload) > STAGE_PRODUCTS
    products = _products(prescaler, reload)
    chooser = random.Random(seed)
    ideals = [Fraction(chooser.randrange(1, 300_000 * 1000), 1000) for _ in range(40)]
    ideals += [Fraction(int(products[-1]) + 5), Fraction(1, 2), Fraction(int(products[7]))]
    stage_set = _Stages(stages)
    below, above = stage_set.bracket(np.array([float(x) for x in ideals]))
    for position, ideal in enumerate(ideals):
        low = products[products <= float(ideal)]  # exact: the ideals are thousandths
        high = products[products >= float(ideal)]
        # the float bracket: largest product ≤ x, smallest above floor(x), clipped to the ends
        above_floor = products[products > math.floor(ideal)]
        want_low = int(low[-1]) if len(low) else int(products[0])
        want_high = int(above_floor[0]) if len(above_floor) else int(products[-1])
        assert (below[position], above[position]) == (want_low, want_high)
        exact_low, exact_high = stage_set.nearest(ideal)
        assert (exact_low[0] if exact_low else None) == (int(low[-1]) if len(low) else None)
        assert (exact_high[0] if exact_high else None) == (int(high[0]) if len(high) else None)
        for found in (exact_low, exact_high):
            if found:
                divisor, (first, second) = found
                assert first in prescaler and second in reload and first * second == divisor
