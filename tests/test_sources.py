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


def test_one_ppm_is_86_4_ms_a_day():
    # Arithmetic: 1e-6 × 86 400 s = 0.0864 s.
    assert PPM * 86_400 == Fraction(864, 10_000)


def test_worst_case_is_the_sum_and_rss_beside_it():
    # Common practice, no source (crystal makers' application notes count "frequency
    # stability" as the 25 °C tolerance plus the temperature band): ±20 ppm initial,
    # ±30 ppm over temperature, ±3 ppm/year × 5 years → linear ±65 ppm; RSS
    # √(20² + 30² + 15²) = 39.05 ppm.
    source = Source("main", "crystal", (Fraction(12_000_000),), 20 * PPM, 30 * PPM, 15 * PPM)
    assert source.budget == 65 * PPM
    assert source.budget_rss == pytest.approx(39.0512e-6, rel=1e-5)


def test_rc_astable_worked_example():
    # Source: the timer astable handbook formula f = 1.44/((R1 + 2·R2)·C) (exactly 1/ln 2 for
    # 1.44). R1 = 1 kΩ, R2 = 10 kΩ, C = 10 nF: f = 1/(ln2 × 10e-9 × 21e3) = 6870.0 Hz.
    result = rc_oscillator(
        Fraction(1000),
        Fraction(10_000),
        10 * Fraction(1, 10**9),
        Fraction(1, 100),
        Fraction(5, 100),
    )
    assert float(result.nominal) == pytest.approx(6870.0, abs=0.05)
    # 1 % resistors and 5 % capacitor: 1/(0.99 × 0.95) − 1 = 6.33 % at worst (the rise).
    assert float(result.tolerance) == pytest.approx(1 / (0.99 * 0.95) - 1, abs=1e-6)


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
