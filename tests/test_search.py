"""The solver against the brute-force oracle, the evaluator, and worked examples."""

from fractions import Fraction

import pytest

from clockplan.evaluate import evaluate_plan
from clockplan.solve import Status, search
from tests.helpers import default_result, scenario_from
from tests.oracle import best_plan

SMALL = {
    "uart-only": """
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "11.0592 MHz", "12 MHz"]
        [dividers.bus]
        from = "main"
        divide = "pow2 0..3"
        [peripherals.console]
        kind = "uart"
        from = "bus"
        baud = [115200, 9600]
        divisor = "1..64"
    """,
    "pll-usb": """
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "12 MHz", "25 MHz"]
        [plls.system]
        from = "main"
        reference_divider = "1..6"
        pfd = "1 MHz .. 5 MHz"
        multiplier = "20..60"
        vco = "96 MHz .. 240 MHz"
        [dividers.usb_clock]
        from = "system"
        divide = "2..5"
        [peripherals.usb]
        kind = "usb-full-speed"
        from = "usb_clock"
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
    "fixed-rate-max": """
        [sources.main]
        kind = "oscillator"
        choose = ["10 MHz", "16 MHz", "20 MHz"]
        [dividers.adc]
        from = "main"
        divide = "1..8"
        max = "4 MHz"
        [peripherals.sampler]
        kind = "clock"
        from = "adc"
        rate = "2.5 MHz"
        allowance = "1 %"
    """,
    "fractional": """
        [sources.main]
        kind = "tcxo"
        choose = ["12 MHz", "13 MHz"]
        [plls.audio]
        from = "main"
        reference_divider = "1..2"
        pfd = "5 MHz .. 13 MHz"
        multiplier = "14..18"
        fraction_bits = 3
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
}


@pytest.mark.parametrize("name", sorted(SMALL))
def test_solver_plan_is_the_oracles_best_by_the_whole_ranking(name):
    # The oracle walks every setting with plain loops and ranks by the README's definition:
    # every stage, down to the smallest settings, so the best plan is one plan exactly.
    scenario = scenario_from(SMALL[name], f"{name}.toml")
    result = search(scenario, top=1, time_limit=60)
    oracle = best_plan(scenario)
    assert oracle is not None
    assert result.status is Status.OPTIMAL
    best = result.plans[0]
    assert best.unproved == ()
    assert best.worst_steps == oracle.worst
    assert dict(best.plan.sources) == dict(oracle.plan.sources)
    assert dict(best.plan.settings) == dict(oracle.plan.settings)
    assert best.evaluation.feasible


@pytest.mark.parametrize("name", sorted(SMALL))
def test_every_ranked_plan_passes_the_independent_evaluator(name):
    scenario = scenario_from(SMALL[name], f"{name}.toml")
    result = search(scenario, top=3, time_limit=30)
    seen = set()
    for ranked in result.plans:
        evaluation = evaluate_plan(scenario, ranked.plan)
        assert evaluation.violations == ()
        assert evaluation.feasible
        key = tuple(sorted(ranked.plan.sources.items()))
        assert key not in seen  # one plan per choice of oscillator frequencies
        seen.add(key)
    shares = [ranked.worst_steps for ranked in result.plans]
    assert shares == sorted(shares)


@pytest.mark.parametrize("name", sorted(SMALL))
def test_same_file_same_plans_whatever_the_worker_count(name):
    scenario = scenario_from(SMALL[name])
    runs = [search(scenario, top=3, workers=workers) for workers in (1, 2, 8, 8)]
    plans = [[ranked.plan for ranked in run.plans] for run in runs]
    assert all(other == plans[0] for other in plans[1:])


def test_no_plan_is_proved_infeasible():
    text = (
        SMALL["pll-usb"]
        .replace('choose = ["8 MHz", "12 MHz", "25 MHz"]', 'choose = ["7 MHz"]')
        .replace('reference_divider = "1..6"', "reference_divider = 1")
        .replace('multiplier = "20..60"', 'multiplier = "20..21"')
    )
    result = search(scenario_from(text), top=2)
    assert result.status is Status.INFEASIBLE
    assert result.plans == ()


def test_usb_48_mhz_exactly_from_25_mhz():
    # Worked by hand: 25 MHz ÷ 25 = 1 MHz PFD (inside 1–2 MHz); × 192 = 192 MHz VCO
    # (inside 100–432 MHz, multiplier inside 50–432); ÷ 4 = 48 MHz exactly.
    # Source: USB 2.0 §7.1.11: a host, hub or high-speed-capable device (the default) sends
    # full speed within ±0.05 %, so the 48 MHz clock must hold it.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["25 MHz"]
        [plls.system]
        from = "main"
        reference_divider = "1..63"
        pfd = "1 MHz .. 2 MHz"
        multiplier = "50..432"
        vco = "100 MHz .. 432 MHz"
        [dividers.usb_clock]
        from = "system"
        divide = "2..15"
        [peripherals.usb]
        kind = "usb-full-speed"
        from = "usb_clock"
    """)
    best = search(scenario, top=1).plans[0]
    (check,) = best.evaluation.checks
    assert check.achieved == 48_000_000
    assert check.error == 0
    assert check.requirement.allowance == Fraction(5, 10_000)


def test_the_bundled_boards_best_plans_are_the_ones_the_output_tests_set_by_hand(
    default_scenario,
):
    # Output tests use tests/helpers.py's hand-built plans; this keeps them the real answer.
    found = search(default_scenario, top=2)
    by_hand = default_result(default_scenario)
    assert (found.status, found.order) == (by_hand.status, by_hand.order)
    assert found.proved
    assert [(r.rank, r.plan, r.stages, r.choice) for r in found.plans] == [
        (r.rank, r.plan, r.stages, r.choice) for r in by_hand.plans
    ]
    assert [r.evaluation for r in found.plans] == [r.evaluation for r in by_hand.plans]
