"""Limits are counted before anything is built, and no range is ever walked.

These boards once hung the loader or spent minutes before refusing; the tests check
what is done (or not done), never how long it takes.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

import clockplan.scenario as scenario_module
from clockplan.errors import ScenarioError
from clockplan.peripherals.base import largest, smallest
from clockplan.scenario import MAX_CANDIDATES, parse_scenario

UART_16_FRACTION_BITS = """\
[sources.main]
kind = "crystal"
choose = ["12 MHz"]
[peripherals.console]
kind = "uart"
from = "main"
baud = [115200]
fraction_bits = 16
"""


def test_smallest_and_largest_never_walk_a_range():
    huge = range(3, 2**80, 7)  # iterating it would never end
    assert smallest(huge) == 3
    assert largest(huge) == 3 + 7 * ((2**80 - 1 - 3) // 7)
    assert (smallest((5, 2, 9)), largest((5, 2, 9))) == (2, 9)


def test_a_uart_with_16_fraction_bits_loads_with_its_divisor_as_a_range():
    board = parse_scenario(UART_16_FRACTION_BITS, "uart.toml")
    (requirement,) = board.peripherals[0].requirements
    (divisors,) = requirement.divisor.value_sets
    assert isinstance(divisors, range)
    assert largest(divisors) == 16 * 65535 * 2**16


def test_candidates_over_the_limit_together_are_refused_before_any_is_built(monkeypatch):
    def never(*args, **kwargs):
        raise AssertionError("a candidate range was built before the total was counted")

    monkeypatch.setattr(scenario_module, "_candidate_range", never)
    text = "".join(
        f'[sources.s{index}]\nkind = "crystal"\n'
        f'choose = {{ from = "1 MHz", to = "2.5 MHz", step = "1 Hz" }}\n'
        for index in range(2)
    )
    with pytest.raises(ScenarioError) as raised:
        parse_scenario(text, "two.toml")
    assert str(raised.value) == (
        f"two.toml: sources.s1.choose: the sources offer 3000002 candidate frequencies "
        f"together; at most {MAX_CANDIDATES}"
    )


def test_candidates_at_the_limit_are_built_exactly():
    text = (
        '[sources.main]\nkind = "crystal"\n'
        'choose = { from = "1.5 Hz", to = "2.25 Hz", step = "0.25 Hz" }\n'
        '[peripherals.p]\nkind = "clock"\nfrom = "main"\nrate = "1 Hz"\nallowance = "60 %"\n'
    )
    board = parse_scenario(text, "steps.toml")
    assert board.sources[0].candidates == tuple(Fraction(n, 4) for n in (6, 7, 8, 9))


def test_can_segment_limits_as_wide_as_the_quanta_load():
    text = (
        '[sources.main]\nkind = "crystal"\nchoose = ["16 MHz"]\n'
        '[peripherals.bus]\nkind = "can"\nfrom = "main"\nbitrate = "500 kHz"\n'
        'quanta = "8..512"\nphase1 = "1..512"\nphase2 = "1..512"\npropagation = "0..512"\n'
        'sample_point_window = "100 %"\n'
    )
    (requirement,) = parse_scenario(text, "can.toml").peripherals[0].requirements
    assert len(requirement.options) == 505  # one per quanta count 8..512


def test_fine_budget_terms_round_up_to_one_ppb_and_allowances_down():
    text = (
        '[sources.main]\nkind = "crystal"\nchoose = ["12 MHz"]\n'
        'tolerance = "0.0000000000000000001 ppm"\nstability = "0 ppm"\naging = "0 ppm"\n'
        '[peripherals.p]\nkind = "clock"\nfrom = "main"\nrate = "1 MHz"\ndivide = "1..64"\n'
        'allowance = "10.0000000009 ppm"\n'
    )
    board = parse_scenario(text, "fine.toml")
    assert board.sources[0].tolerance == Fraction(1, 10**9)
    assert board.peripherals[0].requirements[0].allowance == Fraction(10, 10**6)
