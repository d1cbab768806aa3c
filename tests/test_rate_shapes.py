"""The two shapes of a required rate: a target within an allowance, or a maximum.

Each shape answers for itself (worst case, share, margin, pass, words), so no caller asks
which one it holds; the figures below are worked by hand.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from clockplan.peripherals.base import (
    CeilingRate,
    Option,
    Options,
    Stages,
    ToleranceRate,
    plain,
)

BUDGET = Fraction(1, 1000)
"""A source off by up to ±0.1 %."""


def tolerance_rate() -> ToleranceRate:
    return ToleranceRate(
        peripheral="p",
        label="1 kHz",
        setting="p.divide",
        target=Fraction(1000),
        allowance=Fraction(1, 100),
        allowance_basis="test",
    )


def ceiling_rate() -> CeilingRate:
    return CeilingRate(
        peripheral="p",
        label="bus clock",
        setting="p.divide",
        maximum=Fraction(25_000_000),
        floor=Fraction(9_000_000),
        allowance_basis="test",
    )


def test_a_tolerance_rate_measures_its_worst_case_against_its_allowance():
    rate = tolerance_rate()
    (option,) = rate.options
    achieved = Fraction(1005)  # e = +0.5 %
    # |e| + b·(1 + e) = 1/200 + (1/1000)·(201/200) = 1201/200000
    assert rate.worst_case(achieved, BUDGET) == Fraction(1201, 200_000)
    assert rate.share(achieved, BUDGET, option) == Fraction(1201, 2000)
    assert rate.margin(achieved, BUDGET, option) == Fraction(799, 200_000)
    assert rate.passes(achieved, BUDGET, option)
    assert not rate.passes(Fraction(1010), BUDGET, option)  # 1 % + 0.101 % > 1 %
    assert rate.ranked_by_share
    assert rate.standing_text(achieved, BUDGET, option, brief=True) == (
        "error +0.5 %, worst case 0.6005 % of 1 % allowed"
    )
    assert rate.standing_text(achieved, BUDGET, option, brief=False) == (
        "error +0.5 %, worst 0.6005 % of 1 % (60.05 % used), margin +0.3995 %"
    )


@pytest.mark.parametrize(("share", "risky"), [(Fraction(4, 5), False), (Fraction(81, 100), True)])
def test_a_tolerance_rate_is_at_risk_past_four_fifths_of_its_allowance(share, risky):
    assert tolerance_rate().at_risk(share) is risky


def test_an_option_with_its_own_allowance_overrides_the_rates():
    rate = tolerance_rate()
    own = Option((1,), Fraction(1, 10))
    assert rate.allowance_of(own) == Fraction(1, 10)
    assert rate.allowance_of(Option((1,))) == Fraction(1, 100)
    assert rate.limit_text(own) == "10 %"


def test_a_ceiling_rate_measures_its_fastest_rate_against_its_maximum():
    rate = ceiling_rate()
    (option,) = rate.options
    achieved = Fraction(24_000_000)
    # 24 MHz × 1.001 / 25 MHz = 0.96096
    assert rate.share(achieved, BUDGET, option) == Fraction(3003, 3125)
    assert rate.worst_case(achieved, BUDGET) == Fraction(-122, 3125)
    assert rate.margin(achieved, BUDGET, option) == Fraction(122, 3125)
    assert rate.allowance_of(option) is None
    assert rate.passes(achieved, BUDGET, option)
    assert not rate.passes(Fraction(25_000_000), BUDGET, option)  # over, with the budget
    assert not rate.passes(Fraction(9_000_000), BUDGET, option)  # under the floor, likewise
    assert not rate.at_risk(Fraction(1))
    assert not rate.ranked_by_share
    assert rate.limit_text(option) == "9 MHz .. 25 MHz"
    assert rate.worst_case_rss_text(0.5) == "-"
    assert rate.standing_text(achieved, BUDGET, option, brief=False) == (
        "limit 9 MHz .. 25 MHz: with the budget at most 96.10 % of it (-3.904 %)"
    )


@pytest.mark.parametrize(
    ("divisor", "keys"),
    [
        (plain(range(1, 9)), ("t.divide",)),
        (Options((Option((1, 2)), Option((4,)))), ("t.divide", "t.divide_option")),
        (Stages((("prescaler", (1, 8)), ("reload", range(1, 257)))), None),
    ],
    ids=["plain", "options", "stages"],
)
def test_one_divisor_field_names_the_settings_it_takes(divisor, keys):
    rate = ToleranceRate(
        peripheral="t",
        label="tick",
        setting="t.divide",
        target=Fraction(1),
        allowance=Fraction(1, 1000),
        allowance_basis="test",
        divisor=divisor,
    )
    stage_keys = (rate.stage_setting("prescaler"), rate.stage_setting("reload"))
    assert rate.setting_keys == (keys or stage_keys)
