"""Oscillator budgets against published formulas and worked examples."""

from fractions import Fraction

import pytest

from clockplan.sources import (
    ParabolicCurve,
    Source,
    lc_oscillator,
    load_pulling,
    rc_oscillator,
)
from clockplan.tick import drift

PPM = Fraction(1, 10**6)
PICO = Fraction(1, 10**12)


def test_tuning_fork_parabola_at_45_degrees():
    # Source: a tuning-fork crystal datasheet's worked example: k = −0.030 ppm/°C²,
    # T0 = 25 °C, at 45 °C: −0.030 × 20² = −12.0 ppm.
    curve = ParabolicCurve(Fraction(-30, 1000), Fraction(25))
    assert curve.offset(Fraction(45)) == -12 * PPM


def test_the_default_tuning_fork_curve_lies_in_the_published_spread():
    # Source: tuning-fork crystal datasheets: k = −0.030 ± 0.01 ppm/°C² with the turnover at
    # 25 ± 5 °C (one datasheet), −0.035 and −0.04 for other cuts. The default −0.034 is a
    # typical figure (from memory) inside that spread.
    curve = ParabolicCurve()
    assert Fraction(-40, 1000) <= curve.coefficient_ppm <= Fraction(-20, 1000)
    assert 20 <= curve.turnover_c <= 30
    # Over the default −20..70 °C the far end is 45 °C from the turnover: 0.034 × 45² ppm.
    low, high = curve.extremes(Fraction(-20), Fraction(70))
    assert (low, high) == (Fraction(-6885, 100) * PPM, Fraction(0))


def test_tuning_fork_over_25_plus_minus_30_degrees():
    # k = −0.034 ppm/°C² (typical, from memory): at 25 ± 30 °C the crystal is 0.034 × 30² =
    # 30.6 ppm slow at both ends, and exact at the turnover.
    low, high = ParabolicCurve().extremes(Fraction(-5), Fraction(55))
    assert (low, high) == (Fraction(-306, 10) * PPM, Fraction(0))


def test_a_20_ppm_budget_drifts_1_728_s_a_day():
    # Arithmetic: 20 × 1e-6 × 86 400 s = 1.728 s a day, 630.72 s in 365 days; the
    # mailing-list rule of thumb "one ppm is 30 seconds a year" puts it near 600 s.
    source = Source("slow", "tuning-fork", (Fraction(32_768),), 20 * PPM, Fraction(0), Fraction(0))
    lapse = drift(source.budget)
    assert lapse.per_day == Fraction("1.728")
    assert lapse.per_year == Fraction("630.72")
    assert lapse.per_year == pytest.approx(20 * 30, rel=0.06)


def test_worst_case_is_the_sum_and_rss_beside_it():
    # Common practice, no source (crystal makers' application notes count "frequency
    # stability" as the 25 °C tolerance plus the temperature band): ±20 ppm initial,
    # ±30 ppm over temperature, ±3 ppm/year × 5 years → linear ±65 ppm; RSS
    # √(20² + 30² + 15²) = 39.05 ppm.
    source = Source("main", "crystal", (Fraction(12_000_000),), 20 * PPM, 30 * PPM, 15 * PPM)
    assert source.budget == 65 * PPM
    assert source.budget_rss == pytest.approx(39.0512e-6, rel=1e-5)


@pytest.mark.parametrize(
    ("r1", "r2", "capacitance", "hertz"),
    [
        # Source: published 555 astable worked answers of an online electronics calculator,
        # f = 1/(ln 2·(R1 + 2·R2)·C): 1 kΩ, 10 kΩ, 100 nF → 686.998 Hz; 10 kΩ, 10 kΩ,
        # 1 µF → 48.09 Hz.
        (1000, 10_000, Fraction(1, 10**7), 686.998),
        (10_000, 10_000, Fraction(1, 10**6), 48.09),
    ],
)
def test_rc_astable_published_worked_examples(r1, r2, capacitance, hertz):
    result = rc_oscillator(
        Fraction(r1), Fraction(r2), capacitance, Fraction(1, 100), Fraction(5, 100)
    )
    assert float(result.nominal) == pytest.approx(hertz, abs=0.0005 if hertz > 100 else 0.005)
    # 1 % resistors and 5 % capacitor: 1/(0.99 × 0.95) − 1 = 6.33 % at worst (the rise), and
    # the nominal's rounding to 1 mHz on top, outward.
    rise = 1 / (Fraction(99, 100) * Fraction(95, 100)) - 1
    rounding = Fraction(1, 2000) / result.nominal + Fraction(1, 10**12)
    assert rise < result.tolerance <= rise + rounding


def test_lc_resonance_worked_example():
    # Source: the LC resonance formula f = 1/(2π√(LC)). L = 10 µH, C = 100 pF:
    # f = 1/(2π × √1e-15) = 5.0329 MHz.
    result = lc_oscillator(10 * Fraction(1, 10**6), 100 * PICO, Fraction(5, 100), Fraction(2, 100))
    assert float(result.nominal) == pytest.approx(5_032_921.2, abs=0.1)
    assert float(result.tolerance) == pytest.approx((0.95 * 0.98) ** -0.5 - 1, rel=1e-6)


def test_pulling_between_two_load_capacitances():
    # Source: crystal makers' pulling formula Δf/f = (Cm/2)(1/(C0 + CL_b) − 1/(C0 + CL_a));
    # by hand, Cm = 5 fF, C0 = 2 pF, specified CL 10 pF, built with two 18 pF capacitors and
    # 3 pF stray → 12 pF: (Cm/2)(1/(14 pF) − 1/(12 pF)) = −29.76 ppm.
    shift = load_pulling(10 * PICO, (18 * PICO, 18 * PICO), 3 * PICO, Fraction(5, 10**15), 2 * PICO)
    assert float(shift) * 1e6 == pytest.approx(29.76, abs=0.01)
