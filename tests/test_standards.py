"""Checks of the main job against published figures and hand-worked examples."""

from fractions import Fraction
from itertools import product

import pytest

from clockplan.errors import ScenarioError
from clockplan.peripherals.uart import per_end_allowance, receiver_limits
from clockplan.solve import search
from tests.helpers import scenario_from

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


# Source: the "asynchronous operational range" section of microcontroller serial-port
# datasheets. Its formulas, with D = data + parity bits, S samples per bit, S_F the first and
# S_M the middle sample of the majority vote (S_F = 8, S_M = 9 at 16×; 4 and 5 at 8×):
#   R_slow = (D + 1)·S / (S − 1 + D·S + S_F)      R_fast = (D + 2)·S / ((D + 1)·S + S_M)
# They reproduce the datasheets' tables, e.g. 8N1 at 16×: 144/151 and 160/153 (95.36 % and
# 104.58 %); at 8×: 24/25 and 80/77. Written out here apart from clockplan/peripherals/uart.py.
DATASHEET_VOTE_SAMPLES = {16: (8, 9), 8: (4, 5)}


def published_receiver_limits(bits: int, samples: int) -> tuple[Fraction, Fraction]:
    first, middle = DATASHEET_VOTE_SAMPLES[samples]
    slow = Fraction((bits + 1) * samples, samples - 1 + bits * samples + first)
    fast = Fraction((bits + 2) * samples, (bits + 1) * samples + middle)
    return slow, fast


def split_by_hand(bits: int, samples: int) -> Fraction:
    """Both ends ±e at opposite extremes: (1+e)/(1−e) ≤ R_fast and (1−e)/(1+e) ≥ R_slow."""
    slow, fast = published_receiver_limits(bits, samples)
    return min((fast - 1) / (fast + 1), (1 - slow) / (1 + slow))


UART_FRAMES = {"8N1": (8, "none"), "8E1": (8, "even"), "9N1": (9, "none")}


def uart_allowance(frame: str, samples: int, extra: str = "") -> Fraction:
    data_bits, parity = UART_FRAMES[frame]
    scenario = scenario_from(f"""
        [sources.main]
        kind = "crystal"
        choose = ["1.8432 MHz"]
        [peripherals.console]
        kind = "uart"
        from = "main"
        baud = [9600]
        oversampling = {samples}
        data_bits = {data_bits}
        parity = "{parity}"
        {extra}
    """)
    (requirement,) = scenario.peripherals[0].requirements
    return requirement.allowance


def test_the_published_limits_as_the_datasheet_tables_give_them():
    # Source: the datasheet tables above: 8N1 at 16× 144/151 … 160/153, at 8× 24/25 … 80/77.
    assert (
        receiver_limits(8, False, 16)
        == published_receiver_limits(8, 16)
        == (
            Fraction(144, 151),
            Fraction(160, 153),
        )
    )
    assert (
        receiver_limits(8, False, 8)
        == published_receiver_limits(8, 8)
        == (
            Fraction(24, 25),
            Fraction(80, 77),
        )
    )


@pytest.mark.parametrize(
    ("frame", "samples", "exact"),
    [
        # Derived from the published limits: 8N1 at 16× is 7/313 ≈ 2.236 % per end (not half
        # of 7/153, 7/306 ≈ 2.288 %); at 8× 3/157 ≈ 1.911 %. 8E1 and 9N1 both have D = 9:
        # 7/345 ≈ 2.029 % at 16× and 3/173 ≈ 1.734 % at 8×.
        ("8N1", 16, Fraction(7, 313)),
        ("8N1", 8, Fraction(3, 157)),
        ("8E1", 16, Fraction(7, 345)),
        ("8E1", 8, Fraction(3, 173)),
        ("9N1", 16, Fraction(7, 345)),
        ("9N1", 8, Fraction(3, 173)),
    ],
)
def test_uart_split_per_end(frame, samples, exact):
    data_bits, parity = UART_FRAMES[frame]
    bits = data_bits + (parity != "none")
    assert split_by_hand(bits, samples) == exact
    assert uart_allowance(frame, samples) == exact


@pytest.mark.parametrize(("frame", "samples"), [("8N1", 16), ("8N1", 8), ("8E1", 16), ("9N1", 8)])
def test_ends_at_opposite_extremes_stay_inside_the_published_limits(frame, samples):
    data_bits, parity = UART_FRAMES[frame]
    bits = data_bits + (parity != "none")
    slow, fast = published_receiver_limits(bits, samples)
    share = uart_allowance(frame, samples)
    # One end fast and the other slow, either way round: inside, and tight on one side.
    ratios = [(1 + share) / (1 - share), (1 - share) / (1 + share)]
    assert all(slow <= ratio <= fast for ratio in ratios)
    assert fast in ratios or slow in ratios
    # Half the link limit, the old split, breaks the fast limit at opposite extremes.
    half = min(1 - slow, fast - 1) / 2
    assert (1 + half) / (1 - half) > fast


def worst_ratios(this_end: Fraction, far_end: Fraction) -> list[Fraction]:
    """Incoming over receiving rate in both directions, both ends at their extremes."""
    extremes = list(product((this_end, -this_end), (far_end, -far_end)))
    sent_here = [(1 + mine) / (1 + theirs) for mine, theirs in extremes]
    sent_there = [(1 + theirs) / (1 + mine) for mine, theirs in extremes]
    return sent_here + sent_there


def test_a_known_far_end_leaves_this_end_the_rest():
    # By hand, 8N1 at 16× (R_slow 144/151, R_fast 160/153) beside a far end within ±1 %:
    # the tightest of R_fast·0.99 − 1, 1 − R_slow·1.01, 1 − 1.01/R_fast and 0.99/R_slow − 1
    # is 1 − 1.01·153/160 = 547/16000 = 3.41875 % (the far end sending fast to this end slow).
    allowance = uart_allowance("8N1", 16, 'far_end_tolerance = "1 %"')
    assert allowance == Fraction(547, 16000)
    slow, fast = published_receiver_limits(8, 16)
    ratios = worst_ratios(allowance, Fraction(1, 100))
    assert all(slow <= ratio <= fast for ratio in ratios)
    assert max(ratios) == fast


def test_a_far_end_as_loose_as_the_equal_share_gives_it_back():
    assert per_end_allowance(8, False, 16, Fraction(7, 313)) == Fraction(7, 313)
    assert per_end_allowance(8, False, 8, Fraction(3, 157)) == Fraction(3, 157)


def test_far_end_tolerance_and_allowance_are_one_or_the_other():
    with pytest.raises(ScenarioError, match="far_end_tolerance: and allowance both"):
        uart_allowance("8N1", 16, 'far_end_tolerance = "1 %"\nallowance = "2 %"')


def test_a_far_end_too_loose_leaves_nothing():
    # 8N1 at 16× with this end exact tolerates 1 − 153/160 = 4.375 % at the far end.
    with pytest.raises(ScenarioError, match="far_end_tolerance: 4.5 % leaves nothing"):
        uart_allowance("8N1", 16, 'far_end_tolerance = "4.5 %"')


def test_usb_host_and_full_speed_only_figures():
    # Source: USB 2.0 Specification §7.1.11 "Data Signaling Rate": hosts, hubs and
    # high-speed-capable devices transmit full speed within ±0.05 % (11.994 … 12.006 Mb/s);
    # a full-speed-only device within ±0.25 % (11.97 … 12.03 Mb/s). The transceiver clock is
    # 4 × 12 MHz (common practice), so 47.976 … 48.024 MHz and 47.88 … 48.12 MHz.
    def allowance(extra: str) -> tuple[Fraction, str]:
        scenario = scenario_from(f"""
            [sources.main]
            kind = "oscillator"
            choose = ["48 MHz"]
            [peripherals.usb]
            kind = "usb-full-speed"
            from = "main"
            {extra}
        """)
        (requirement,) = scenario.peripherals[0].requirements
        assert requirement.target == 48_000_000
        return requirement.allowance, requirement.allowance_basis

    strict, strict_basis = allowance("")
    assert 12_000_000 * (1 - strict) == 11_994_000 and 12_000_000 * (1 + strict) == 12_006_000
    assert 48_000_000 * (1 - strict) == 47_976_000
    assert "host, hub or high-speed-capable device" in strict_basis
    loose, loose_basis = allowance("full_speed_only_device = true")
    assert 12_000_000 * (1 - loose) == 11_970_000 and 12_000_000 * (1 + loose) == 12_030_000
    assert 48_000_000 * (1 + loose) == 48_120_000
    assert "full-speed-only device" in loose_basis
    assert allowance("full_speed_only_device = false")[0] == strict


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
