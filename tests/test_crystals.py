"""Tests of the oscillator search in clockplan.crystals: number theory, screen and exact ranking."""

from __future__ import annotations

import functools
import math
from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan import crystals
from clockplan.crystals import (
    FrequencyGrid,
    PllLimits,
    RateTarget,
    audio_targets,
    evaluate,
    exact_multiple,
    frequency_grid,
    plain_targets,
    search_crystals,
    uart_targets,
    usb_full_speed_target,
)
from clockplan.peripherals.base import Divisors
from clockplan.quantities import (
    QuantityError,
    parse_frequency,
    parse_frequency_list,
    parse_frequency_range,
)

MHZ = 10**6
WHOLE = range(1, 65536)
STANDARD_BAUDS = tuple(Fraction(b) for b in (9600, 19200, 38400, 57600, 115200))
DEFAULT_PLL = PllLimits(
    reference_divider=range(1, 17),
    multiplier=range(8, 65),
    vco=(Fraction(96 * MHZ), Fraction(480 * MHZ)),
    pfd=(Fraction(1 * MHZ), Fraction(4 * MHZ)),
)


def uart(*bauds: int, divisor: Divisors = WHOLE, bits: int = 0) -> tuple[RateTarget, ...]:
    return uart_targets(
        [Fraction(b) for b in bauds], oversampling=16, fraction_bits=bits, divisor=divisor
    )


def audio(*rates: int, divisor: Divisors = WHOLE) -> tuple[RateTarget, ...]:
    return audio_targets(
        [Fraction(r) for r in rates],
        ratio=256,
        allowance=crystals.DEFAULT_ALLOWANCE,
        basis="test",
        divisor=divisor,
    )


def plain(*rates: Fraction, divisor: Divisors = WHOLE) -> tuple[RateTarget, ...]:
    return plain_targets(rates, allowance=Fraction(1, 1000), basis="test", divisor=divisor)


# --- the brute-force oracle: plain loops and Fraction, every divisor count tried -----------


def oracle_share(source: Fraction, targets: tuple[RateTarget, ...]) -> Fraction:
    """Worst share over the rates, each rate at its best divisor count, by trying every count."""
    worst = Fraction(0)
    for target in targets:
        best = min(
            abs(source * target.rate / (count * target.clock) / target.rate - 1)
            for count in target.counts
        )
        worst = max(worst, best / target.allowance)
    return worst


def oracle_ranking(
    frequencies: list[Fraction], targets: tuple[RateTarget, ...], pll: PllLimits | None
) -> list[tuple[Fraction, Fraction]]:
    """(frequency, worst share) for every candidate some setting takes: exact first, then
    by worst share, ties by frequency."""
    rows = []
    for frequency in frequencies:
        if pll is None:
            rows.append((oracle_share(frequency, targets), frequency))
            continue
        shares = [
            oracle_share(frequency * multiplier / divider, targets)
            for divider in pll.reference_divider
            for multiplier in pll.multiplier
            if pll.pfd[0] <= frequency / divider <= pll.pfd[1]
            and pll.vco[0] <= frequency * multiplier / divider <= pll.vco[1]
        ]
        if shares:
            rows.append((min(shares), frequency))
    rows.sort(key=lambda row: (row[0] != 0, row[0], row[1]))
    return [(frequency, share) for share, frequency in rows]


SMALL_PLL = PllLimits(
    reference_divider=range(1, 4),
    multiplier=range(8, 21),
    vco=(Fraction(96 * MHZ), Fraction(200 * MHZ)),
    pfd=(Fraction(3 * MHZ), Fraction(13 * MHZ)),
)

BRUTE_FORCE_CASES = {
    "uart with fraction bits, usb, audio, plain": (
        uart(9600, 115200, divisor=range(1, 81), bits=2)
        + (usb_full_speed_target(divisor=range(1, 8)),)
        + audio(48_000, divisor=range(1, 8))
        + plain(Fraction(1000), divisor=range(1, 400)),
        frequency_grid(Fraction(11_000_000), Fraction(11_100_000), Fraction(2000)),
        None,
    ),
    "power-of-two divisors": (
        uart(9600, 57600, divisor=(1, 2, 4, 8, 16, 32, 64, 128)),
        frequency_grid(Fraction(7_300_000), Fraction(7_400_000), Fraction(500)),
        None,
    ),
    "many exact: baud multiples": (
        uart(9600, 38400, divisor=range(1, 60)),
        frequency_grid(Fraction(614_400), Fraction(8_000_000), Fraction(38_400)),
        None,
    ),
    "pll, none exact": (
        uart(115200, divisor=range(1, 120)) + (usb_full_speed_target(divisor=range(1, 6)),),
        frequency_grid(Fraction(12 * MHZ), Fraction(12_040_000), Fraction(2000)),
        SMALL_PLL,
    ),
    "pll, many exact": (
        (usb_full_speed_target(divisor=range(1, 6)),),
        frequency_grid(Fraction(3 * MHZ), Fraction(13 * MHZ), Fraction(100_000)),
        SMALL_PLL,
    ),
    "pll, catalog-like list": (
        audio(48_000, divisor=range(1, 20)) + (usb_full_speed_target(divisor=range(1, 6)),),
        (Fraction(8 * MHZ), Fraction(12 * MHZ), Fraction(12_288_000), Fraction(24 * MHZ)),
        SMALL_PLL,
    ),
}


def case_frequencies(candidates: crystals.Candidates) -> list[Fraction]:
    if isinstance(candidates, FrequencyGrid):
        return [candidates.frequency(k) for k in range(candidates.count)]
    return sorted(candidates)


@functools.cache
def expected_ranking(case: str) -> list[tuple[Fraction, Fraction]]:
    targets, candidates, pll = BRUTE_FORCE_CASES[case]
    return oracle_ranking(case_frequencies(candidates), targets, pll)


SCREENS = [
    (case, filtered)
    for case, (_, _, pll) in BRUTE_FORCE_CASES.items()
    for filtered in ([False, True] if pll else [False])
]


@pytest.mark.parametrize(("case", "filtered"), SCREENS)
def test_fast_search_agrees_with_brute_force(
    case: str, filtered: bool, monkeypatch: pytest.MonkeyPatch
) -> None:
    # The oracle above tries every divisor count and PLL setting with Fraction; the search
    # must rank every candidate the same, exact count included.
    targets, candidates, pll = BRUTE_FORCE_CASES[case]
    if filtered:  # force the sampled-threshold PLL screen onto these small cases
        monkeypatch.setattr(crystals, "FULL_SCREEN_LIMIT", 0)
        monkeypatch.setattr(crystals, "SAMPLE_SIZE", 9)
    frequencies = case_frequencies(candidates)
    expected = expected_ranking(case)
    for top in (1, 5, len(expected)):
        search = search_crystals(targets, candidates, pll=pll, top=top)
        got = [(candidate.frequency, candidate.worst_share) for candidate in search.ranked]
        assert got == expected[:top]
        assert search.exact_count == sum(1 for _, share in expected if share == 0)
        assert search.without_setting == len(frequencies) - len(expected)


# --- number theory -------------------------------------------------------------------------


def test_standard_bauds_need_a_multiple_of_1_8432_mhz() -> None:
    # Arithmetic: 1.8432 MHz = 16 × 115 200 serves every standard rate (the classic UART
    # crystal, common practice); lcm of 16 × {9600, 19200, 38400, 57600, 115200} = 1 843 200.
    assert exact_multiple(uart(9600, 19200, 38400, 57600, 115200)) == 1_843_200


def test_44_1_and_48_khz_master_clocks_meet_only_at_1_806336_ghz() -> None:
    # Arithmetic: 44100/48000 = 147/160, so
    # lcm(256 × 44100, 256 × 48000) = 256 × 7 056 000 = 1 806 336 000 Hz.
    assert Fraction(44_100, 48_000) == Fraction(147, 160)
    assert exact_multiple(audio(44_100, 48_000)) == 256 * 7_056_000 == 1_806_336_000


def test_lcm_of_fractional_divided_clocks() -> None:
    # arithmetic: lcm(a/b, c/d) = lcm(a, c)/gcd(b, d); 110 baud × 16 / 2**7 = 55/4 Hz.
    targets = uart(110, 300, bits=7)
    assert targets[0].clock == Fraction(55, 4) and targets[1].clock == Fraction(75, 2)
    assert exact_multiple(targets) == Fraction(825, 2)
    assert all((exact_multiple(targets) / t.clock).denominator == 1 for t in targets)


@settings(max_examples=150, deadline=None)
@given(
    low=st.integers(1, 400),
    step=st.integers(1, 60),
    count=st.integers(2, 300),
    modulus=st.integers(1, 500),
    denominator=st.sampled_from([1, 2, 3, 7]),
    window=st.tuples(st.integers(0, 20_000), st.integers(0, 20_000)),
)
def test_progression_lists_exactly_the_multiples_on_the_grid(
    low: int, step: int, count: int, modulus: int, denominator: int, window: tuple[int, int]
) -> None:
    # The congruence solution must list the same indices as a plain loop.
    grid = FrequencyGrid(Fraction(low, denominator), Fraction(step, denominator), count)
    lowest, highest = Fraction(min(window), denominator), Fraction(max(window), denominator)
    multiple = Fraction(modulus, 3)
    first, stride, found = crystals._progression(grid, multiple, lowest, highest)
    expected = [
        k
        for k in range(count)
        if (grid.frequency(k) / multiple).denominator == 1
        and lowest <= grid.frequency(k) <= highest
    ]
    assert [first + n * stride for n in range(found)] == expected


# --- exact figures against published tables ------------------------------------------------


@pytest.mark.parametrize(
    ("oscillator", "baud", "divisor", "error"),
    [
        # By hand (16× oversampling, nearest whole divisor): f / (16 × divisor) / baud − 1.
        (16 * MHZ, 9600, 104, Fraction(1, 624)),  # +0.160 %
        (8 * MHZ, 115200, 4, Fraction(8 * MHZ, 16 * 4 * 115200) - 1),  # +8.507 %
        (12_288_000, 57600, 13, Fraction(12_288_000, 16 * 13 * 57600) - 1),  # +2.564 %
        (48 * MHZ, 115200, 26, Fraction(48 * MHZ, 16 * 26 * 115200) - 1),  # +0.160 %
        (11_059_200, 9600, 72, Fraction(0)),
    ],
)
def test_uart_divisor_and_error_by_hand(
    oscillator: int, baud: int, divisor: int, error: Fraction
) -> None:
    candidate = evaluate(Fraction(oscillator), uart(baud))
    assert candidate is not None
    (result,) = candidate.rates
    assert (result.divisor, result.error) == (divisor, error)
    assert round(float(error) * 100, 3) in (0.160, 8.507, 2.564, 0.0)


def test_fractional_baud_divisor_counts_sixteenths() -> None:
    # arithmetic: 16 MHz / (16 × 115200) = 8.6806; in sixteenths the nearest is 139/16 = 8.6875,
    # giving 16e6 / (16 × 8.6875) = 115107.9 baud, −0.0799 %.
    candidate = evaluate(Fraction(16 * MHZ), uart(115200, bits=4))
    assert candidate is not None
    (result,) = candidate.rates
    assert result.divisor == Fraction(139, 16) and result.count == 139
    assert result.achieved == Fraction(16 * MHZ * 16, 16 * 139)
    assert float(result.error) == pytest.approx(-0.000799, abs=1e-6)


def test_quick_search_allowances_follow_the_standards() -> None:
    # Derived from the published receiver limits of serial-port datasheets (R_slow 144/151,
    # R_fast 160/153 for 8N1 at 16×; 24/25 and 80/77 at 8×): each end ±e at opposite
    # extremes, (1+e)/(1−e) ≤ R_fast, gives 7/313 at 16× and 3/157 at 8×.
    assert uart(9600)[0].allowance == Fraction(7, 313)
    (eight,) = uart_targets([Fraction(9600)], oversampling=8, fraction_bits=0, divisor=WHOLE)
    assert eight.allowance == Fraction(3, 157)
    # Source: USB 2.0 §7.1.11: ±0.05 % unless the device is full-speed only (±0.25 %).
    strict = usb_full_speed_target(divisor=WHOLE)
    assert strict.allowance == Fraction(1, 2000) and "high-speed-capable" in strict.allowance_basis
    only = usb_full_speed_target(divisor=WHOLE, full_speed_only_device=True)
    assert only.allowance == Fraction(1, 400) and "full-speed-only" in only.allowance_basis


# --- the PLL -------------------------------------------------------------------------------


def test_12_mhz_through_a_pll_gives_usb_exactly() -> None:
    # By hand: 12 MHz / 1 × 16 = 192 MHz VCO, ÷ 4 = 48 MHz.
    pll = PllLimits(
        range(1, 2), range(16, 17), DEFAULT_PLL.vco, (Fraction(MHZ), Fraction(12 * MHZ))
    )
    candidate = evaluate(Fraction(12 * MHZ), (usb_full_speed_target(divisor=WHOLE),), pll)
    assert candidate is not None and candidate.exact and candidate.pll is not None
    assert (candidate.pll.reference_divider, candidate.pll.multiplier) == (1, 16)
    assert candidate.pll.vco == 192 * MHZ and candidate.rates[0].divisor == 4


def test_equal_vcos_prefer_the_lowest_then_the_smallest_divider() -> None:
    # With a 1..4 MHz PFD, 12 MHz needs R >= 3; 96 MHz (12/3 × 24, ÷2) is the lowest exact VCO
    # (12/6 × 48 gives it too, with a larger reference divider).
    candidate = evaluate(Fraction(12 * MHZ), (usb_full_speed_target(divisor=WHOLE),), DEFAULT_PLL)
    assert candidate is not None and candidate.exact and candidate.pll is not None
    assert (candidate.pll.reference_divider, candidate.pll.multiplier) == (3, 24)
    assert candidate.pll.vco == 96 * MHZ and candidate.pll.pfd == 4 * MHZ


def test_an_oscillator_no_pll_setting_takes_is_left_out() -> None:
    # 500 kHz is below the 1 MHz PFD floor for every reference divider.
    assert evaluate(Fraction(500_000), uart(9600), DEFAULT_PLL) is None
    search = search_crystals(uart(9600), (Fraction(500_000), Fraction(8 * MHZ)), pll=DEFAULT_PLL)
    assert [c.frequency for c in search.ranked] == [8 * MHZ] and search.without_setting == 1


def test_pll_cannot_be_exact_for_usb_and_115200_baud() -> None:
    # arithmetic: lcm(48 MHz, 16 × 115200) = 2^13·3^2·5^6 = 1.152 GHz, above a 480 MHz VCO.
    targets = uart(115200) + (usb_full_speed_target(divisor=WHOLE),)
    assert exact_multiple(targets) == 1_152_000_000
    search = search_crystals(targets, (Fraction(12 * MHZ), Fraction(25 * MHZ)), pll=DEFAULT_PLL)
    assert search.exact_count == 0 and all(c.worst_share > 0 for c in search.ranked)


# --- exactness beyond 64-bit integers -----------------------------------------------------


def test_candidates_too_fine_for_int64_are_still_ranked_exactly() -> None:
    # 1/3**40 Hz off 12 MHz: the common unit needs Python integers; exactness must survive.
    near = Fraction(12 * MHZ) + Fraction(1, 3**40)
    search = search_crystals(plain(Fraction(MHZ)), (near, Fraction(12 * MHZ)))
    assert [c.frequency for c in search.ranked] == [12 * MHZ, near]
    assert search.ranked[0].exact and not search.ranked[1].exact
    assert search.exact_count == 1


# --- reading rates -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "hertz"),
    [
        ("44.1k", 44_100),
        ("48 kHz", 48_000),
        ("1kHz", 1000),
        ("115200", 115_200),
        ("12M", 12 * MHZ),
        ("11.0592 MHz", 11_059_200),
        ("1e6", MHZ),
        ("48 MHZ", 48 * MHZ),
    ],
)
def test_rate_shorthand(text: str, hertz: int) -> None:
    assert parse_frequency(text, bare_unit="Hz") == hertz


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("48m", "has unit 'm'"),
        ("48 mhz", 'write "MHz" for megahertz or "mHz" for millihertz'),
        ("0", "not a positive frequency"),
        ("-9600", "not a positive frequency"),
        ("fast", "not a frequency"),
    ],
)
def test_bad_rates_are_refused(text: str, problem: str) -> None:
    with pytest.raises(QuantityError, match=problem):
        parse_frequency(text, bare_unit="Hz")


def test_rate_lists_and_ranges() -> None:
    assert parse_frequency_list("48k, 44.1k,48000", bare_unit="Hz") == (48_000, 44_100)
    assert parse_frequency_range("1M..50 MHz") == (MHZ, 50 * MHZ)
    for text in ("", " , "):
        with pytest.raises(QuantityError, match="empty list"):
            parse_frequency_list(text, bare_unit="Hz")
    with pytest.raises(QuantityError, match="runs backwards"):
        parse_frequency_range("50 MHz..1 MHz")


@pytest.mark.parametrize(
    ("low", "high", "step", "problem"),
    [
        (MHZ, 2 * MHZ, 2 * MHZ, "larger than the range"),
        (MHZ, 2 * MHZ, 0, "not positive"),
        (MHZ, MHZ, 100, "is empty"),
        (MHZ, 50 * MHZ, 1, "more than"),
    ],
)
def test_bad_grids_are_refused(low: int, high: int, step: int, problem: str) -> None:
    with pytest.raises(QuantityError, match=problem):
        frequency_grid(Fraction(low), Fraction(high), Fraction(step))


def test_grid_counts_both_ends() -> None:
    # 1..50 MHz at 100 Hz: 49 MHz / 100 Hz + 1 = 490 001 candidates.
    grid = frequency_grid(Fraction(MHZ), Fraction(50 * MHZ), Fraction(100))
    assert grid.count == 490_001 and grid.high == 50 * MHZ
    assert math.isclose(float(grid.frequency(1)), 1_000_100)
