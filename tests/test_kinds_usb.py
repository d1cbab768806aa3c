"""USB low speed and high speed: their data-rate tolerances and plans end to end."""

from fractions import Fraction

import pytest

from clockplan.errors import ScenarioError
from clockplan.evaluate import evaluate_plan
from clockplan.peripherals.usb import (
    FULL_SPEED_ONLY_TOLERANCE,
    HIGH_SPEED_TOLERANCE,
    LOW_SPEED_RATE,
)
from clockplan.solve import Status, search
from tests.helpers import scenario_from
from tests.oracle import best_key


def test_low_speed_tolerances():
    # Source: USB 2.0 Specification §7.1.11 "Data Signaling Rate": a low-speed device sends
    # 1.50 Mb/s ±1.5 %, i.e. 1 477 500 … 1 522 500 b/s; hosts and hubs send low speed within
    # ±0.05 %, 1 499 250 … 1 500 750 b/s.
    def low_speed(extra: str) -> tuple[Fraction, str]:
        scenario = scenario_from(LOW_SPEED.format(kind="ceramic", usb="usb-low-speed") + extra)
        (requirement,) = scenario.peripherals[0].requirements
        return requirement.allowance, requirement.allowance_basis

    device, device_basis = low_speed("low_speed_device = true")
    assert LOW_SPEED_RATE * (1 - device) == 1_477_500
    assert LOW_SPEED_RATE * (1 + device) == 1_522_500
    assert "low-speed device" in device_basis
    host, host_basis = low_speed("")
    assert LOW_SPEED_RATE * (1 - host) == 1_499_250
    assert LOW_SPEED_RATE * (1 + host) == 1_500_750
    assert "host or hub" in host_basis


def test_high_speed_tolerance():
    # Source: USB 2.0 Specification §7.1.11: high speed 480.00 Mb/s ±500 ppm, i.e.
    # 479 760 000 … 480 240 000 b/s.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["12 MHz"]
        [peripherals.usb]
        kind = "usb-high-speed"
        from = "main"
        reference = "12 MHz"
    """)
    (requirement,) = scenario.peripherals[0].requirements
    assert 480_000_000 * (1 - requirement.allowance) == 479_760_000
    assert 480_000_000 * (1 + requirement.allowance) == 480_240_000


def test_usb_role_keys_take_true_or_false():
    text = LOW_SPEED.format(kind="crystal", usb="usb-full-speed")
    with pytest.raises(ScenarioError, match="keyboard.full_speed_only_device: 'yes' is not true"):
        scenario_from(text + 'full_speed_only_device = "yes"')
    with pytest.raises(ScenarioError, match="keyboard.low_speed_device: is not a known key"):
        scenario_from(text + "low_speed_device = true")


LOW_SPEED = """
[sources.main]
kind = "{kind}"
choose = ["6 MHz"]
[peripherals.keyboard]
kind = "{usb}"
from = "main"
"""


def test_a_ceramic_resonator_serves_a_low_speed_device_but_not_full_speed():
    # Source: USB 2.0 §7.1.11: the low-speed tolerance "allows the use of resonators in
    # low-cost low-speed devices". The ceramic resonator's default budget (0.5 % + 0.3 % +
    # aging; README's source table) fits ±1.5 % but not even a full-speed-only device's
    # ±0.25 %, nor a host's ±0.05 % at low speed.
    low = scenario_from(
        LOW_SPEED.format(kind="ceramic", usb="usb-low-speed") + "low_speed_device = true"
    )
    (requirement,) = low.peripherals[0].requirements
    assert requirement.target == 6_000_000  # 4 × 1.5 Mb/s
    result = search(low, top=1)
    assert result.status is Status.OPTIMAL
    assert result.plans[0].evaluation.feasible
    assert low.source("main").budget > FULL_SPEED_ONLY_TOLERANCE
    host = scenario_from(LOW_SPEED.format(kind="ceramic", usb="usb-low-speed"))
    assert search(host, top=1).status is Status.INFEASIBLE
    full = LOW_SPEED.format(kind="ceramic", usb="usb-full-speed").replace("6 MHz", "48 MHz")
    only = scenario_from(full + "full_speed_only_device = true")
    assert search(only, top=1).status is Status.INFEASIBLE


def test_high_speed_phy_reference_through_a_divider_matches_the_oracle():
    # 12 MHz directly or 24 MHz ÷ 2 give the reference exactly; 25 MHz cannot within 500 ppm.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["12 MHz", "24 MHz", "25 MHz"]
        [dividers.phy_clock]
        from = "main"
        divide = [1, 2, 4]
        [peripherals.usb]
        kind = "usb-high-speed"
        from = "phy_clock"
        reference = "12 MHz"
    """)
    (requirement,) = scenario.peripherals[0].requirements
    assert requirement.target == 12_000_000
    assert requirement.allowance == HIGH_SPEED_TOLERANCE
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    assert best_key(scenario, result.precision)[0] == result.plans[0].worst_steps
    assert {ranked.plan.sources["main"] for ranked in result.plans} == {
        12_000_000,
        24_000_000,
    }
    for ranked in result.plans:
        assert evaluate_plan(scenario, ranked.plan).feasible


def test_high_speed_needs_its_reference():
    with pytest.raises(ScenarioError, match="usb.reference: is missing"):
        scenario_from("""
            [sources.main]
            kind = "crystal"
            choose = ["12 MHz"]
            [peripherals.usb]
            kind = "usb-high-speed"
            from = "main"
        """)
