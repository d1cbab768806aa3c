"""Tests of the crystal-circuit and simple-oscillator formulas in clockplan.circuits."""

from __future__ import annotations

import math
from fractions import Fraction

import pytest

from clockplan.circuits import (
    MIN_GAIN_MARGIN,
    PICOFARAD,
    PierceBoard,
    PierceCrystal,
    analyse_pierce,
    critical_transconductance,
    drive_level,
    equal_capacitor,
    lc_resonance_frequency,
    load_capacitance,
    nearest_equal_pair,
    nearest_unequal_pair,
    pulling,
    pulling_sensitivity,
    rc_astable_frequency,
    standard_capacitors,
    symmetric_astable_frequency,
)
from clockplan.quantities import Dimension, QuantityError, parse_positive_quantity

PF = PICOFARAD
FF = Fraction(1, 10**15)
MHZ = 10**6


def pf(value: float | int | str) -> Fraction:
    """A capacitance written in picofarads, exactly."""
    return Fraction(str(value)) * PF


def test_equal_pair_for_12_pf_load_with_3_pf_stray_is_two_18_pf_capacitors() -> None:
    # Source: crystal makers' load-capacitance notes, C1 = C2 = 2·(CL − C_stray); by hand:
    # 2·(12 − 3) = 18 pF, and back: 18·18/(18 + 18) + 3 = 9 + 3 = 12 pF.
    assert equal_capacitor(pf(12), pf(3)) == pf(18)
    assert load_capacitance(pf(18), pf(18), pf(3)) == pf(12)


@pytest.mark.parametrize(
    ("first", "second", "stray", "load"),
    [
        # Source: crystal makers' load-capacitance notes, CL = C1·C2/(C1 + C2) + C_stray;
        # the values by hand.
        (18, 18, 3, 12),  # 9 + 3
        (19, 19, 3, "12.5"),  # 9.5 + 3
        (12, 12, 4, 10),  # 6 + 4
        (10, 40, 2, 10),  # arithmetic: 400/50 + 2
    ],
)
def test_load_capacitance_series_formula(first: int, second: int, stray: int, load: object) -> None:
    assert load_capacitance(pf(first), pf(second), pf(stray)) == pf(str(load))


@pytest.mark.parametrize(("load", "stray"), [(12, 12), (12, 15)])
def test_stray_at_or_above_the_load_is_refused(load: int, stray: int) -> None:
    with pytest.raises(ValueError, match="stray"):
        equal_capacitor(pf(load), pf(stray))


def test_negative_capacitor_is_refused() -> None:
    with pytest.raises(ValueError, match="positive"):
        load_capacitance(pf(-18), pf(18), pf(3))


@pytest.mark.parametrize(("series", "per_decade"), [("E12", 12), ("E24", 24)])
def test_standard_series_have_their_count_per_decade(series: str, per_decade: int) -> None:
    # Source: IEC 60063 — the E-number is the count of values per decade (from memory).
    values = standard_capacitors(series)  # type: ignore[arg-type]
    assert len(values) == 3 * per_decade
    assert values[0] == pf(1) and values[per_decade] == pf(10)
    assert pf(18) in values and pf(19) not in values


def test_unknown_series_is_refused() -> None:
    with pytest.raises(ValueError, match="E12 or E24"):
        standard_capacitors("E96")  # type: ignore[arg-type]


def test_nearest_equal_pair_snaps_to_the_series() -> None:
    # 12.5 pF load, 3 pF stray: the exact pair is 19 pF, not in E12; 18 pF is nearest
    # (22 pF is 3 pF away), giving 9 + 3 = 12 pF.
    pair = nearest_equal_pair(pf("12.5"), pf(3), "E12")
    assert (pair.first, pair.second, pair.load) == (pf(18), pf(18), pf(12))


def test_nearest_equal_pair_tie_goes_to_the_smaller_capacitor() -> None:
    # E24 holds 18 pF and 20 pF, both 1 pF from the exact 19 pF; our rule picks the smaller.
    assert nearest_equal_pair(pf("12.5"), pf(3), "E24").first == pf(18)


def test_unequal_pair_comes_closer_than_the_equal_one() -> None:
    # 15 pF and 27 pF in series: 405/42 = 9.643 pF, + 3 pF = 12.643 pF, 0.143 pF from 12.5 pF
    # where the best equal E12 pair (18 pF) misses by 0.5 pF.
    pair = nearest_unequal_pair(pf("12.5"), pf(3), "E12")
    assert (pair.first, pair.second) == (pf(15), pf(27))
    assert pair.load == pf(3) + pf(Fraction(405, 42))
    assert not pair.equal and pair.second <= 2 * pair.first


def test_pulling_worked_check() -> None:
    # Source: crystal makers' pulling formula Δf/f = (Cm/2)·(1/(C0 + CL_b) − 1/(C0 + CL_a));
    # by hand with Cm 5 fF, C0 2 pF:
    # Δf/f = (5 fF/2)·(1/14 pF − 1/12 pF) = 2.5e-3·(−2/168) = −1/33600 = −29.76 ppm.
    shift = pulling(5 * FF, pf(2), pf(10), pf(12))
    assert shift == Fraction(-1, 33600)
    assert round(float(shift) * 1e6, 2) == -29.76
    # By hand: CL 10 → 8 pF gives (2.5e-3)·(1/10 − 1/12) = +41.67 ppm.
    assert round(float(pulling(5 * FF, pf(2), pf(10), pf(8))) * 1e6, 2) == 41.67


def test_pulling_sensitivity_worked_check() -> None:
    # Source: crystal makers' trim sensitivity S = −Cm/(2·(C0 + CL)²); by hand
    # S = −5 fF/(2·(12 pF)²) per farad;
    # per picofarad that is −5e-3/288 = −1/57600 = −17.36 ppm/pF.
    per_pf = pulling_sensitivity(5 * FF, pf(2), pf(10)) * PF
    assert per_pf == Fraction(-1, 57600)
    assert round(float(per_pf) * 1e6, 2) == -17.36


def test_critical_transconductance_and_gain_margin_worked_check() -> None:
    # Source: a microcontroller maker's oscillator design guide, an application note (gm_crit
    # formula and the
    # gain margin); a public design notebook works this very case. Step by step:
    #   2πF = 2π · 16 MHz = 1.00531e8 rad/s, squared 1.01065e16
    #   (C0 + CL)² = (7 pF + 9 pF)² = (16e-12)² = 2.56e-22 F²
    #   gm_crit = 4 · 80 Ω · 1.01065e16 · 2.56e-22 = 8.279e-4 A/V = 0.8279 mA/V
    #   margin = 17 mA/V / 0.8279 mA/V = 20.53
    gm_crit = critical_transconductance(Fraction(80), Fraction(16 * MHZ), pf(7), pf(9))
    assert gm_crit * 1e3 == pytest.approx(0.8279, abs=5e-5)
    assert 17e-3 / gm_crit == pytest.approx(20.53, abs=5e-3)


@pytest.mark.parametrize(
    ("esr", "frequency", "shunt", "load", "expected"),
    [
        # gm_crit = 4·ESR·(2πF)²·(C0 + CL)² (a microcontroller maker's application note),
        # worked by hand, in A/V.
        (60, 8 * MHZ, 3, 10, 0.1025e-3),
        (50, 25 * MHZ, 3, 10, 0.8340e-3),
        (70_000, 32_768, "1.3", "12.5", 2.260e-6),
        (70_000, 32_768, "1.0", 7, 0.7596e-6),
    ],
)
def test_critical_transconductance_check_values(
    esr: int, frequency: int, shunt: object, load: object, expected: float
) -> None:
    gm_crit = critical_transconductance(Fraction(esr), Fraction(frequency), pf(shunt), pf(load))
    assert gm_crit == pytest.approx(expected, rel=5e-4)


@pytest.mark.parametrize(
    ("frequency", "esr", "node", "swing", "expected"),
    [
        # Source: crystal makers' technical guides, DL = I_rms²·ESR; the voltage form
        # I_rms = π·F·C·V_pp/√2 is from memory; the values by hand.
        # 8 MHz: I_rms = π·8e6·20e-12·1/√2 = 0.3554 mA; DL = 50·(0.3554e-3)² = 6.32 µW.
        (8 * MHZ, 50, 20, "1", 6.32e-6),
        (32_768, 70_000, 15, "0.5", 20.9e-9),
    ],
)
def test_drive_level_check_values(
    frequency: int, esr: int, node: int, swing: str, expected: float
) -> None:
    power = drive_level(Fraction(esr), Fraction(frequency), pf(node), Fraction(swing))
    assert power == pytest.approx(expected, rel=3e-3)


@pytest.fixture
def sixteen_mhz_crystal() -> PierceCrystal:
    """A 16 MHz crystal specified at 9 pF, C0 7 pF, ESR 80 Ω: the design notebook's case."""
    return PierceCrystal(
        frequency=Fraction(16 * MHZ),
        load=pf(9),
        shunt=pf(7),
        motional=5 * FF,
        esr=Fraction(80),
        max_drive=Fraction(100, 10**6),
    )


def test_analysis_reuses_the_worked_gain_margin(sixteen_mhz_crystal: PierceCrystal) -> None:
    # Source: the design notebook's worked case above; 9 pF with 3 pF stray needs 12 pF
    # capacitors, an E12 value,
    # so the built load is the specified one and the 20.53 margin carries over.
    board = PierceBoard(stray=pf(3), transconductance=Fraction(17, 1000), swing=Fraction(1))
    analysis = analyse_pierce(sixteen_mhz_crystal, board)
    assert analysis.pair.first == analysis.pair.second == pf(12)
    assert analysis.load_error == 0 and analysis.pulling == 0
    assert analysis.gain_margin == pytest.approx(20.53, abs=5e-3)
    assert analysis.starts_reliably is True
    # Drive level node: larger capacitor + half the stray = 13.5 pF (from memory).
    assert analysis.node_capacitance == pf("13.5")
    assert analysis.drive_level == pytest.approx(
        drive_level(Fraction(80), Fraction(16 * MHZ), pf("13.5"), Fraction(1))
    )


def test_analysis_flags_a_weak_amplifier(sixteen_mhz_crystal: PierceCrystal) -> None:
    # gm 3 mA/V against gm_crit 0.8279 mA/V is a margin of 3.6, below the 5 that the
    # oscillator design guide (a microcontroller maker's application note) asks for.
    board = PierceBoard(stray=pf(3), transconductance=Fraction(3, 1000))
    analysis = analyse_pierce(sixteen_mhz_crystal, board)
    assert analysis.gain_margin is not None and analysis.gain_margin < MIN_GAIN_MARGIN
    assert analysis.starts_reliably is False


def test_analysis_without_optional_figures_leaves_them_unknown() -> None:
    crystal = PierceCrystal(frequency=Fraction(16 * MHZ), load=pf(12))
    analysis = analyse_pierce(crystal, PierceBoard(stray=pf(3)))
    assert analysis.pair.load == pf(12)
    assert analysis.pulling is None and analysis.critical_transconductance is None
    assert analysis.drive_level is None and analysis.starts_reliably is None


@pytest.mark.parametrize(
    ("r1", "r2", "capacitance", "hertz", "digits"),
    [
        # Source: published 555 astable worked answers of an online electronics calculator:
        # 1 kΩ, 10 kΩ, 100 nF → 686.998 Hz; 10 kΩ, 10 kΩ, 1 µF → 48.09 Hz.
        (1000, 10_000, Fraction(1, 10**7), 686.998, 3),
        (10_000, 10_000, Fraction(1, 10**6), 48.09, 2),
    ],
)
def test_rc_astable_published_worked_examples(
    r1: int, r2: int, capacitance: Fraction, hertz: float, digits: int
) -> None:
    frequency = rc_astable_frequency(Fraction(r1), Fraction(r2), capacitance)
    assert round(frequency, digits) == hertz
    # The rounded handbook form 1.44/((R1 + 2·R2)·C) is within 0.2 % of the exact one.
    assert frequency == pytest.approx(1.44 / float((r1 + 2 * r2) * capacitance), rel=2e-3)


def test_symmetric_astable_worked_example() -> None:
    # Source: symmetric two-transistor astable, half period ln2·R·C (handbook form).
    # R = 10 kΩ, C = 100 nF: f = 1/(2·ln2·1e-3 s) = 721.35 Hz.
    frequency = symmetric_astable_frequency(Fraction(10_000), Fraction(1, 10**7))
    assert frequency == pytest.approx(721.35, abs=0.01)


@pytest.mark.parametrize(
    ("inductance", "capacitance", "expected"),
    [
        # arithmetic: 1/(2π·√(10 µH · 100 pF)) = 1/(2π·3.1623e-8 s) = 5.0329 MHz
        (Fraction(10, 10**6), pf(100), 5.0329e6),
        # By hand: a 16 MHz crystal with Cm = 5 fF has L1 = 1/((2π·16 MHz)²·5 fF) = 19.79 mH.
        (Fraction(1979, 10**5), 5 * FF, 16e6),
    ],
)
def test_lc_resonance(inductance: Fraction, capacitance: Fraction, expected: float) -> None:
    assert lc_resonance_frequency(inductance, capacitance) == pytest.approx(expected, rel=1e-4)


def test_lc_resonance_is_the_inverse_of_the_tank_formula() -> None:
    # arithmetic: L = 1/((2πf)²·C) for f = 1 MHz, C = 1 nF must resonate at 1 MHz.
    inductance = Fraction(1 / ((2 * math.pi * 1e6) ** 2 * 1e-9))
    assert lc_resonance_frequency(inductance, Fraction(1, 10**9)) == pytest.approx(1e6)


@pytest.mark.parametrize(
    ("text", "dimension", "value"),
    [
        ("40 ohm", "resistance", Fraction(40)),
        ("70 kΩ", "resistance", Fraction(70_000)),
        ("1.5 Mohm", "resistance", Fraction(1_500_000)),
        ("10 mA/V", "transconductance", Fraction(1, 100)),
        ("17 mS", "transconductance", Fraction(17, 1000)),
        ("100 uW", "power", Fraction(1, 10**4)),
        ("0.5 µW", "power", Fraction(1, 2 * 10**6)),
        ("500 mV", "voltage", Fraction(1, 2)),
        ("10 uH", "inductance", Fraction(1, 10**5)),
        ("4 KOHM", "resistance", Fraction(4000)),
        ("2 MOHMS", "resistance", Fraction(2_000_000)),
        ("0.5 UW", "power", Fraction(1, 2 * 10**6)),
    ],
)
def test_circuit_quantities_parse_exactly(text: str, dimension: Dimension, value: Fraction) -> None:
    assert parse_positive_quantity(text, dimension) == value


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("40", "has no unit"),
        ("ohm", "is not a resistance"),
        ("-4 ohm", "not a positive resistance"),
        ("0 ohm", "not a positive resistance"),
        ("4 mohm", "has unit 'mohm'"),
        ("4 Ohm Ohm", "is not a resistance"),
    ],
)
def test_bad_resistances_are_refused(text: str, problem: str) -> None:
    with pytest.raises(QuantityError, match=problem):
        parse_positive_quantity(text, "resistance")
