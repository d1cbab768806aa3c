"""Checks of the main job against published figures and hand-worked examples."""

from fractions import Fraction

import pytest

from clockplan.interfaces.uart import link_mismatch_limit, per_end_allowance
from clockplan.interfaces.usb import FULL_SPEED_CLOCK, FULL_SPEED_TOLERANCE
from clockplan.solve import search
from tests.conftest import scenario_from

UART_ON_CRYSTAL = """
[sources.main]
kind = "crystal"
choose = ["{crystal}"]
[peripherals.console]
kind = "uart"
from = "main"
baud = [{bauds}]
oversampling = 16
divisor = "1..65535"
allowance = "10 %"
"""


def _uart_checks(crystal: str, bauds: list[int]):
    text = UART_ON_CRYSTAL.format(crystal=crystal, bauds=", ".join(map(str, bauds)))
    return search(scenario_from(text), top=1).plans[0].evaluation.checks


def test_11_0592_mhz_gives_exact_standard_bauds():
    # Source: common practice, no source — 11.0592 MHz = 6 × 1.8432 MHz = 6 × 16 × 115200 Hz,
    # so every rate 115200/k divides it exactly at 16× oversampling (divisors 6, 12, 18, 36, 72).
    checks = _uart_checks("11.0592 MHz", [115200, 57600, 38400, 19200, 9600])
    assert [check.error for check in checks] == [0, 0, 0, 0, 0]
    assert [check.divisor // 16 for check in checks] == [6, 12, 18, 36, 72]


def test_12_mhz_at_115200_baud_by_hand():
    # By hand: 12 MHz / (16 × 115200) = 6.5104…; divisor 7 gives 12e6/112 = 107142.857 Bd,
    # error 107142.857/115200 − 1 = −6.994 %; divisor 6 gives 125000 Bd, +8.507 %. So 7 wins.
    (check,) = _uart_checks("12 MHz", [115200])
    assert check.divisor == 7 * 16
    assert check.achieved == Fraction(12_000_000, 112)
    assert check.error == Fraction(12_000_000, 112 * 115_200) - 1
    assert float(check.error) == pytest.approx(-0.06994, abs=1e-5)


def test_uart_link_limit_for_8n1_at_16x():
    # Source: the asynchronous-operational-range tables of microcontroller serial-port
    # datasheets (facts sheet §2.3): 8N1 at 16× tolerates 144/151 … 160/153 of the nominal rate.
    # Step by step: D = 8 data bits, S = 16 samples per bit.
    #   R_slow = (D+1)·S / (S − 1 + D·S + S/2) = 144 / (15 + 128 + 8) = 144/151
    #   R_fast = (D+2)·S / ((D+1)·S + S/2 + 1) = 160 / (144 + 8 + 1) = 160/153
    # The link limit is min(1 − 144/151, 160/153 − 1) = min(7/151, 7/153) = 7/153 ≈ 4.575 %,
    # each end gets half: 7/306 ≈ 2.288 %.
    assert link_mismatch_limit(8, False, 16) == Fraction(7, 153)
    assert per_end_allowance(8, False, 16) == Fraction(7, 306)


def test_uart_link_limit_for_8n1_at_8x():
    # Source: as above, 8× with 8 data bits: R_slow = 24/25, R_fast = 80/77 (facts §2.3 table).
    #   R_slow = 9·8 / (7 + 64 + 4) = 72/75 = 24/25;  R_fast = 10·8 / (72 + 4 + 1) = 80/77
    # Limit min(1/25, 3/77) = 3/77 ≈ 3.896 %; each end 3/154 ≈ 1.948 %.
    assert link_mismatch_limit(8, False, 8) == Fraction(3, 77)
    assert per_end_allowance(8, False, 8) == Fraction(3, 154)


def test_usb_full_speed_tolerance():
    # Source: USB 2.0 Specification §7.1.11 (section number from memory): full-speed data
    # rate 12.000 Mb/s ±0.25 %; the transceiver clock is 4 × 12 MHz (common practice).
    assert FULL_SPEED_TOLERANCE == Fraction(1, 400)
    assert FULL_SPEED_CLOCK == 4 * 12_000_000
    assert FULL_SPEED_CLOCK * (1 - FULL_SPEED_TOLERANCE) == 47_880_000
    assert FULL_SPEED_CLOCK * (1 + FULL_SPEED_TOLERANCE) == 48_120_000


def test_32768_hz_through_fifteen_binary_stages_is_one_hertz():
    # Source: 2**15 = 32768 (arithmetic); the tuning-fork crystal's frequency exists for this.
    scenario = scenario_from("""
        [sources.slow]
        kind = "tuning-fork"
        choose = ["32.768 kHz"]
        [peripherals.rtc]
        kind = "tick"
        from = "slow"
        chain = "pow2 15"
    """)
    (check,) = search(scenario, top=1).plans[0].evaluation.checks
    assert check.achieved == 1
