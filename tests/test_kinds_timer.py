"""Timers: an exact tick or PWM frequency through a prescaler and a reload counter."""

from fractions import Fraction

from clockplan.evaluate import evaluate_plan
from clockplan.peripherals.timer import DEFAULT_ALLOWANCE
from clockplan.solve import Status, search
from tests.helpers import scenario_from
from tests.oracle import best_key


def test_default_allowance_is_a_tenth_of_a_percent():
    # common practice, no source: ±0.1 % on a timer's rate.
    assert DEFAULT_ALLOWANCE == Fraction(1, 1000)


def test_1_khz_tick_from_72_mhz_is_exact():
    # By hand: 72 MHz / 1 kHz = 72 000 = prescaler × reload, e.g. 2 × 36 000 (72 000 itself
    # does not fit a 16-bit reload).
    scenario = scenario_from("""
        [sources.main]
        kind = "oscillator"
        choose = ["72 MHz"]
        [peripherals.scheduler]
        kind = "timer"
        from = "main"
        rate = "1 kHz"
    """)
    best = search(scenario, top=1).plans[0]
    (check,) = best.evaluation.checks
    assert check.error == 0
    prescaler = best.plan.settings["scheduler.period.prescaler"]
    reload = best.plan.settings["scheduler.period.reload"]
    assert prescaler * reload == 72_000
    assert reload <= 65_536


def test_pwm_resolution_and_oracle():
    # A 20 kHz PWM with at least 100 duty steps from three crystals: reload ≥ 100.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "10 MHz", "14.7456 MHz"]
        [peripherals.motor]
        kind = "timer"
        from = "main"
        rate = "20 kHz"
        prescaler = "1..8"
        reload = "100..400"
    """)
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    assert best_key(scenario, result.precision)[0] == result.plans[0].worst_steps
    for ranked in result.plans:
        evaluation = evaluate_plan(scenario, ranked.plan)
        assert evaluation.violations == ()
        assert evaluation.feasible
        assert ranked.plan.settings["motor.period.reload"] >= 100
    best = result.plans[0]
    assert best.evaluation.checks[0].error == 0  # 8 or 10 MHz divide to 20 kHz exactly
