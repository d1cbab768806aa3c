"""Tests of divider chains, drift, temperature behaviour and calibration in clockplan.tick."""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.quantities import QuantityError
from clockplan.tick import (
    PPM,
    ParabolicCurve,
    PulseCalibration,
    SymmetricBand,
    best_calibration,
    drift,
    parse_chain,
    search_chain,
    suggest_chain,
    temperature_drift,
)

WATCH_CRYSTAL = Fraction(32_768)


def test_watch_crystal_through_15_binary_stages_is_exactly_1_hz() -> None:
    # Arithmetic: 32 768 = 2**15, so 15 binary stages give exactly 1 Hz.
    search = search_chain(WATCH_CRYSTAL, Fraction(1), parse_chain("pow2 15"))
    assert search.exact and search.exact_count == 1
    assert search.best.tick_hz == 1 and search.best.error == 0
    assert search.best.divisors == (2**15,)


def test_one_ppm_is_86_4_ms_per_day() -> None:
    # arithmetic: 1e-6 × 86 400 s = 0.0864 s.
    assert drift(PPM).per_day == Fraction(864, 10_000)


def test_20_ppm_drift_per_day_month_and_year() -> None:
    # Arithmetic: 20 ppm × 86 400 s = 1.728 s/day; ×30 = 51.84 s; ×365 = 630.72 s.
    lapse = drift(20 * PPM)
    assert lapse.per_day == Fraction("1.728")
    assert lapse.per_month == Fraction("51.84")
    assert lapse.per_year == Fraction("630.72")


def test_positive_error_gains_time() -> None:
    # arithmetic: 32 768 Hz ÷ 32 765 is 32768/32765 Hz, 3/32765 fast, so the clock gains time.
    search = search_chain(WATCH_CRYSTAL, Fraction(1), parse_chain("32765"))
    assert search.best.error == Fraction(3, 32765)
    assert drift(search.best.error).per_day > 0


def test_calibration_step_of_a_2_20_cycle_window() -> None:
    # Source: a microcontroller reference manual's RTC calibration (32 s window, resolution
    # about 0.954 ppm); by hand, 2**20 cycles of 32 768 Hz is 32 s, and one cycle per step
    # over that window is 1/2**20 = 0.95367431640625 ppm.
    assert Fraction(2**20) / WATCH_CRYSTAL == 32
    step = PulseCalibration(window_cycles=2**20).step
    assert step == Fraction(1, 2**20)
    assert float(step / PPM) == 0.95367431640625


@pytest.fixture
def thirty_two_second_window() -> PulseCalibration:
    """One cycle per step over 2**20 cycles, at most 511 steps (an RTC reference manual's)."""
    return PulseCalibration(window_cycles=2**20, cycles_per_step=1, max_steps=511)


def test_calibration_cancels_a_fast_clock_by_skipping(
    thirty_two_second_window: PulseCalibration,
) -> None:
    # arithmetic: 12.3 ppm / 0.95367 ppm = 12.897 steps → skip 13; 13/2**20 = 12.398 ppm,
    # leaving 12.3 − 12.398 = −0.098 ppm.
    setting = best_calibration(Fraction("12.3") * PPM, thirty_two_second_window)
    assert (setting.action, setting.steps, setting.limited) == ("skip", 13, False)
    assert setting.correction == Fraction(-13, 2**20)
    assert setting.residual == Fraction("12.3") * PPM - Fraction(13, 2**20)
    assert abs(setting.residual) <= thirty_two_second_window.step / 2


def test_calibration_speeds_a_slow_clock_by_adding(
    thirty_two_second_window: PulseCalibration,
) -> None:
    setting = best_calibration(Fraction(-5) * PPM, thirty_two_second_window)
    assert (setting.action, setting.steps) == ("add", 5)
    assert setting.correction == Fraction(5, 2**20)


def test_calibration_stops_at_the_step_limit(thirty_two_second_window: PulseCalibration) -> None:
    # With the window in source cycles, masking n cycles slows the count by exactly n/W:
    # 511/2**20 = 487.33 ppm is the reach (a window counted in corrected cycles, as in
    # the reference manual's published −487.1 ppm, divides by 2**20 + 511 instead).
    assert thirty_two_second_window.reach == Fraction(511, 2**20)
    setting = best_calibration(Fraction(600) * PPM, thirty_two_second_window)
    assert (setting.steps, setting.limited) == (511, True)


def test_calibration_with_nothing_to_correct(thirty_two_second_window: PulseCalibration) -> None:
    setting = best_calibration(Fraction("0.4") * PPM, thirty_two_second_window)
    assert (setting.action, setting.steps, setting.correction) == ("none", 0, 0)


@pytest.mark.parametrize(("window", "cycles_per_step"), [(0, 1), (1024, 0), (1024, 1024)])
def test_impossible_calibration_windows_are_refused(window: int, cycles_per_step: int) -> None:
    with pytest.raises(QuantityError):
        PulseCalibration(window_cycles=window, cycles_per_step=cycles_per_step)


def test_tuning_fork_parabola_datasheet_example() -> None:
    # Source: a tuning-fork crystal datasheet's worked example (k = −0.030 ± 0.01 ppm/°C²,
    # turnover 25 ± 5 °C): at 45 °C, −0.030 × (45 − 25)² = −12.0 ppm.
    curve = ParabolicCurve(coefficient_ppm=Fraction("-0.030"), turnover_c=Fraction(25))
    assert curve.offset(Fraction(45)) == Fraction(-12) * PPM


@pytest.mark.parametrize(
    ("temperature", "ppm"),
    # By hand, k = −0.034 ppm/°C²: k·(T − 25)².
    [(-40, "-143.65"), (0, "-21.25"), (10, "-7.65"), (60, "-41.65"), (85, "-122.4")],
)
def test_typical_parabola_table(temperature: int, ppm: str) -> None:
    # The default coefficient −0.034 ppm/°C² is typical, from memory; tuning-fork datasheets
    # publish −0.030 ± 0.01, −0.035 and −0.04 ppm/°C².
    assert ParabolicCurve().offset(Fraction(temperature)) == Fraction(ppm) * PPM


@pytest.mark.parametrize(("low", "high"), [(-20, 70), (0, 50), (25, 85), (-40, 10)])
def test_parabola_average_matches_numerical_integration(low: int, high: int) -> None:
    # The closed form against the trapezoid rule over a fine grid (an independent oracle).
    curve = ParabolicCurve()
    exact = curve.average_offset(Fraction(low), Fraction(high))
    temperatures = np.linspace(low, high, 20_001)
    offsets = float(curve.coefficient_ppm * PPM) * (temperatures - 25.0) ** 2
    numeric = np.trapezoid(offsets, temperatures) / (high - low)
    assert float(exact) == pytest.approx(float(numeric), rel=1e-8)


def test_parabola_average_of_a_single_temperature_is_its_offset() -> None:
    curve = ParabolicCurve()
    assert curve.average_offset(Fraction(30), Fraction(30)) == curve.offset(Fraction(30))


def test_parabola_average_symmetric_range_is_the_uniform_variance() -> None:
    # arithmetic: over −20..70 °C, centred on 25 °C, the mean of (T − 25)² is the variance of
    # a uniform spread of width 90: 90²/12 = 675; × −0.034 ppm = −22.95 ppm.
    average = ParabolicCurve().average_offset(Fraction(-20), Fraction(70))
    assert average == Fraction("-22.95") * PPM


def test_temperature_drift_of_a_parabola_includes_the_synthesis_error() -> None:
    base = Fraction(5) * PPM
    heat = temperature_drift(base, ParabolicCurve(), Fraction(-20), Fraction(70))
    # turnover inside the range: the highest error is the synthesis error alone
    assert heat.highest.error == base
    assert heat.lowest.error == base + Fraction("-0.034") * 45**2 * PPM
    assert heat.worst is heat.lowest
    assert heat.average is not None
    assert heat.average.per_day == (base + Fraction("-22.95") * PPM) * 86_400


def test_temperature_drift_of_a_band_has_edges_but_no_average() -> None:
    heat = temperature_drift(
        Fraction(3) * PPM, SymmetricBand(20 * PPM), Fraction(-20), Fraction(70)
    )
    assert (heat.lowest.error, heat.highest.error) == (-17 * PPM, 23 * PPM)
    assert heat.worst is heat.highest and heat.average is None


def test_backwards_temperature_range_is_refused() -> None:
    with pytest.raises(QuantityError, match="backwards"):
        temperature_drift(Fraction(0), ParabolicCurve(), Fraction(70), Fraction(-20))


def test_8_mhz_through_two_prescalers_has_exact_settings() -> None:
    # arithmetic: 8 000 000 = 2**9 · 5**6; the first stage must be a divisor of 8e6 in
    # 8e6/65536 = 122.07 .. 128, i.e. 125 or 128, so exactly two settings.
    search = search_chain(Fraction(8 * 10**6), Fraction(1), parse_chain("1..128 x 1..65536"))
    assert search.exact_count == 2
    assert [setting.divisors for setting in search.settings] == [(125, 64000), (128, 62500)]


def test_1_mhz_with_a_binary_prescaler_and_a_counter() -> None:
    # arithmetic: 1e6 = 2**6 · 5**6; the binary stage must divide 2**6 and leave ≤ 65536,
    # so 16, 32 or 64.
    search = search_chain(Fraction(10**6), Fraction(1), parse_chain("pow2 0..10 x 1..65536"))
    assert [setting.divisors for setting in search.settings] == [
        (16, 62500),
        (32, 31250),
        (64, 15625),
    ]


@pytest.mark.parametrize("chain", ["pow2 15", "pow2 0..20", "pow2 10 x pow2 0..8"])
def test_40_khz_cannot_reach_1_hz_through_binary_stages(chain: str) -> None:
    # arithmetic: 40 000 = 2**6 · 5**4 is not a power of two; the closest binary division is
    # 2**15, giving 40000/32768 = 625/512 Hz (+22 %).
    search = search_chain(Fraction(40_000), Fraction(1), parse_chain(chain))
    assert not search.exact and search.exact_count == 0
    assert search.best.tick_hz == Fraction(625, 512)


def test_40_khz_reaches_1_hz_through_programmable_prescalers() -> None:
    # arithmetic: the divisors of 40 000 from 2 to 128 (the second stage holds at most 32768):
    # 2, 4, 5, 8, 10, 16, 20, 25, 32, 40, 50, 64, 80, 100, 125 — fifteen exact settings.
    search = search_chain(
        Fraction(40_000), Fraction(1), parse_chain("1..128 x 1..32768"), listed=20
    )
    assert search.exact_count == 15
    assert [s.divisors[0] for s in search.settings] == [
        2,
        4,
        5,
        8,
        10,
        16,
        20,
        25,
        32,
        40,
        50,
        64,
        80,
        100,
        125,
    ]
    assert all(math.prod(s.divisors) == 40_000 for s in search.settings)


def test_listing_is_capped_but_the_count_is_complete() -> None:
    search = search_chain(Fraction(40_000), Fraction(1), parse_chain("1..128 x 1..32768"), listed=3)
    assert len(search.settings) == 3 and search.exact_count == 15


@pytest.mark.parametrize(
    ("source", "chain"),
    [
        (40_000, "pow2 6 x 625"),
        (10**6, "pow2 6 x 15625"),
        (8 * 10**6, "pow2 9 x 15625"),
        (32_768, "pow2 15"),
        (15_625, "15625"),
    ],
)
def test_suggested_chain_for_1_hz(source: int, chain: str) -> None:
    # arithmetic: split source/1 Hz into its power of two and its odd part.
    suggested = suggest_chain(Fraction(source), Fraction(1))
    assert suggested.text == chain
    assert search_chain(Fraction(source), Fraction(1), suggested).exact


def test_suggested_chain_for_an_inexact_ratio_is_the_nearest_division() -> None:
    # 32768/3 = 10922.67: 10923 gives −30.5 ppm, 10922 gives +61.0 ppm.
    suggested = suggest_chain(WATCH_CRYSTAL, Fraction(3))
    assert suggested.text == "10923"


def test_chain_that_cannot_reach_the_tick_is_refused() -> None:
    # ÷128 from 32 768 Hz gives 256 Hz, far from 1 Hz.
    with pytest.raises(QuantityError, match="cannot reach"):
        search_chain(WATCH_CRYSTAL, Fraction(1), parse_chain("128"))


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("", "empty stage"),
        ("128,,256", "empty item"),
        ("128 x  x 256", "empty stage"),
        ("0..5", "below the smallest"),
        ("pow2 70", "2\\*\\*62"),
        ("pow2 40 x pow2 40", "more than 2\\*\\*62"),
        ("1|8|64", "uses a bar; separate alternatives with commas"),
        ("fast", "not a whole number"),
    ],
)
def test_bad_chains_are_refused(text: str, problem: str) -> None:
    with pytest.raises(QuantityError, match=problem):
        parse_chain(text)


def test_stage_with_a_choice_of_divisors() -> None:
    chain = parse_chain("1,8,64,256,1024 x 1..65535")
    assert chain.stages[0].choices == (1, 8, 64, 256, 1024)
    search = search_chain(Fraction(8 * 10**6), Fraction(1), chain)
    # arithmetic: only 256 × 31250 fits (1024 leaves 7812.5; 64 leaves 125000 > 65535).
    assert [s.divisors for s in search.settings] == [(256, 31250)]


def _brute_force(stages: list[tuple[int, ...]]) -> dict[int, int]:
    """Every total division of the chain and how many settings give it (the oracle)."""
    counts: dict[int, int] = {}
    for divisors in itertools.product(*stages):
        division = math.prod(divisors)
        counts[division] = counts.get(division, 0) + 1
    return counts


@settings(max_examples=60, deadline=None)
@given(
    source=st.integers(min_value=1_000, max_value=200_000),
    rate=st.integers(min_value=1, max_value=50),
    first=st.integers(min_value=1, max_value=40),
    second=st.integers(min_value=1, max_value=60),
    binary=st.integers(min_value=0, max_value=4),
)
def test_search_agrees_with_brute_force(
    source: int, rate: int, first: int, second: int, binary: int
) -> None:
    text = f"1..{first} x pow2 0..{binary} × {second}..{second + 30}"
    chain = parse_chain(text)
    counts = _brute_force([stage.choices for stage in chain.stages])
    ratio = Fraction(source, rate)
    best_error = min(abs(ratio / division - 1) for division in counts)
    try:
        search = search_chain(Fraction(source), Fraction(rate), chain)
    except QuantityError:
        # refused only when even the best tick is a factor of two or more off
        assert not Fraction(1, 2) < ratio / min(counts, key=lambda d: abs(ratio / d - 1)) < 2
        return
    if ratio.denominator == 1 and ratio.numerator in counts:
        assert search.exact_count == counts[ratio.numerator]
    else:
        assert search.exact_count == 0
        assert abs(search.best.error) == best_error
        ranked = sorted(counts, key=lambda d: (abs(ratio / d - 1), d))
        assert [s.division for s in search.settings] == ranked[: len(search.settings)]
        assert all(s.settings_with_same_tick == counts[s.division] for s in search.settings)


@settings(max_examples=60, deadline=None)
@given(
    rate=st.integers(min_value=1, max_value=50),
    first=st.integers(min_value=1, max_value=40),
    second=st.integers(min_value=1, max_value=60),
    binary=st.integers(min_value=0, max_value=4),
    picks=st.tuples(st.floats(0, 1), st.floats(0, 1), st.floats(0, 1)),
)
def test_exact_settings_agree_with_brute_force(
    rate: int, first: int, second: int, binary: int, picks: tuple[float, float, float]
) -> None:
    # The source is built from one setting of the chain, so at least that one is exact.
    chain = parse_chain(f"1..{first} x pow2 0..{binary} × {second}..{second + 30}")
    stages = [stage.choices for stage in chain.stages]
    chosen = [
        stage[int(pick * (len(stage) - 1))] for stage, pick in zip(stages, picks, strict=True)
    ]
    source = rate * math.prod(chosen)
    counts = _brute_force(stages)
    search = search_chain(Fraction(source), Fraction(rate), chain, listed=10**6)
    assert search.exact_count == counts[math.prod(chosen)]
    assert tuple(chosen) in {setting.divisors for setting in search.settings}
    assert len(search.settings) == search.exact_count
