"""CAN and CAN FD: bit timing, the oscillator-tolerance conditions, and plans end to end."""

import math
from dataclasses import replace
from fractions import Fraction

import pytest

from clockplan.errors import ScenarioError
from clockplan.evaluate import evaluate_plan
from clockplan.peripherals.can import (
    CLASSICAL_LIMITS,
    BitTiming,
    best_split,
    condition_one,
    condition_two,
    data_tolerance,
    nominal_tolerance,
    recommended_sample_point,
    timing_options,
)
from clockplan.solve import Status, search
from tests.helpers import assert_plans_recheck, scenario_from
from tests.oracle import best_key

# Source: F. Hartwich, A. Bassemir, "The Configuration of the CAN Bit Timing", 6th
# International CAN Conference (1999), and ISO 11898-1, conditions
#   I  df ≤ min(PHASE1, PHASE2) / (2 · (13 · NBT − PHASE2))
#   II df ≤ SJW / (20 · NBT)
# (restated in microcontroller CAN reference manuals). Worked rows: by hand from I and II;
# the first is the paper's most tolerant timing, 1.58 %.
WORKED = [
    # (prop, phase1, phase2, sjw, nbt, condition I, condition II, df)
    (1, 4, 4, 4, 10, Fraction(4, 252), Fraction(4, 200), Fraction(4, 252)),
    (3, 2, 2, 1, 8, Fraction(2, 204), Fraction(1, 160), Fraction(1, 160)),
    (4, 3, 2, 1, 10, Fraction(2, 256), Fraction(1, 200), Fraction(1, 200)),
    (8, 5, 2, 1, 16, Fraction(2, 412), Fraction(1, 320), Fraction(1, 320)),
    (7, 5, 3, 3, 16, Fraction(3, 410), Fraction(3, 320), Fraction(3, 410)),
    (8, 7, 4, 4, 20, Fraction(4, 512), Fraction(4, 400), Fraction(4, 512)),
]


@pytest.mark.parametrize(("prop", "phase1", "phase2", "sjw", "nbt", "one", "two", "df"), WORKED)
def test_oscillator_tolerance_conditions_match_the_worked_table(
    prop, phase1, phase2, sjw, nbt, one, two, df
):
    timing = BitTiming(nbt, prop, phase1, phase2, sjw)
    assert 1 + prop + phase1 + phase2 == nbt
    assert condition_one(timing) == one
    assert condition_two(timing) == two
    assert nominal_tolerance(timing) == df


def test_the_specifications_quoted_tolerance_is_1_58_percent():
    # Source: CAN Specification 2.0 Part B §9 "Oscillator Tolerance": "A maximum oscillator
    # tolerance of 1.58 % is given" (with its rule of thumb: a ceramic resonator up to
    # 125 kbit/s). By conditions I and II the timing PROP 1, PHASE1 = PHASE2 = SJW = 4 (10 tq)
    # gives 4/252 = 1.5873 %, which the specification truncates to 1.58 %.
    df = nominal_tolerance(BitTiming(10, 1, 4, 4, 4))
    assert df == Fraction(1, 63)
    assert math.floor(df * 10_000) / 100 == 1.58


@pytest.mark.parametrize(
    ("bitrate", "point"),
    [
        # Source: CiA Draft Standard 102 v2.0, its bit-timing table (as reproduced in a
        # fieldbus maker's knowledge base).
        (1_000_000, Fraction(75, 100)),
        (800_000, Fraction(80, 100)),
        (500_000, Fraction(875, 1000)),
        (250_000, Fraction(875, 1000)),
        (125_000, Fraction(875, 1000)),
        (50_000, Fraction(875, 1000)),
        (20_000, Fraction(875, 1000)),
        (10_000, Fraction(875, 1000)),
    ],
)
def test_default_sample_point_follows_cia_ds_102(bitrate, point):
    assert recommended_sample_point(Fraction(bitrate)) == point


@pytest.mark.parametrize(
    ("quanta", "point", "df"),
    [
        # Source: CiA DS-102 v2.0 rows with SJW 1, PHASE2 2 (table above); tolerances by I, II:
        # 1 Mbit/s 8 tq at 75 % → 0.625 %; 800 kbit/s 10 tq at 80 % → 0.5 %;
        # 500 kbit/s 16 tq at 87.5 % → 0.3125 %.
        (8, Fraction(3, 4), Fraction(1, 160)),
        (10, Fraction(4, 5), Fraction(1, 200)),
        (16, Fraction(7, 8), Fraction(1, 320)),
    ],
)
def test_best_split_reproduces_the_cia_rows(quanta, point, df):
    limits = replace(CLASSICAL_LIMITS, sjw=1)
    timing = best_split(quanta, point, Fraction(0), limits, nominal_tolerance)
    assert timing is not None
    assert timing.sample_point == point
    assert timing.phase2 == 2
    assert timing.propagation <= 8 and timing.phase1 <= 8
    assert timing.phase1 >= timing.phase2
    assert nominal_tolerance(timing) == df


def test_split_respects_the_classical_segment_limits():
    # CAN 2.0 Part B: PROP 1–8 and PHASE1 1–8, so 25 tq cannot reach 87.5 % (it needs
    # PROP + PHASE1 = 21 > 16); the nearest legal split is outside a ± 2.5 point window.
    assert (
        best_split(25, Fraction(7, 8), Fraction(25, 1000), CLASSICAL_LIMITS, nominal_tolerance)
        is None
    )
    wide = best_split(25, Fraction(7, 8), Fraction(1, 4), CLASSICAL_LIMITS, nominal_tolerance)
    assert wide is not None
    assert (wide.propagation, wide.phase1, wide.phase2) == (8, 8, 8)
    assert wide.sjw == 4  # SJW ≤ min(4, PHASE1, PHASE2)


def test_each_option_divides_by_prescaler_times_quanta():
    options = timing_options(
        range(8, 11),
        range(1, 5),
        Fraction(3, 4),
        Fraction(1, 10),
        CLASSICAL_LIMITS,
        nominal_tolerance,
    )
    for option in options:
        quanta = dict(option.settings)["quanta"]
        assert option.factor == quanta
        assert list(option.divisors) == [quanta * p for p in range(1, 5)]
        assert option.label.startswith(f"{quanta} tq, sample point")


def test_data_phase_condition_is_sjw_over_twenty_bit_times():
    # ISO 11898-1:2015 data-phase condition df ≤ SJW_D / (20 · DBT) (from memory, the
    # analogue of condition II): 10 tq with SJW 3 → 3/200 = 1.5 %.
    assert data_tolerance(BitTiming(10, 0, 6, 3, 3)) == Fraction(3, 200)


CLASSICAL = """
[sources.main]
kind = "crystal"
choose = [{crystals}]
[peripherals.bus]
kind = "can"
from = "main"
bitrate = {bitrate}
prescaler = "{prescaler}"
sjw = 1
"""


def test_16_mhz_at_500_kbits_uses_an_exact_timing():
    # By hand: 16 MHz / 500 kbit/s = 32 = 16 tq × prescaler 2 (or 8 tq × prescaler 4, whose
    # 75 % sample point is outside the 87.5 % ± 2.5 window of CiA DS-102).
    text = CLASSICAL.format(crystals='"16 MHz"', bitrate=500000, prescaler="1..64")
    scenario = scenario_from(text)
    best = search(scenario, top=1).plans[0]
    (check,) = best.evaluation.checks
    assert check.error == 0
    settings = dict(check.option.settings)
    assert settings["quanta"] * (check.divisor // check.option.factor) == 32
    assert check.option.factor == settings["quanta"]
    assert check.allowance == nominal_tolerance(BitTiming(**settings))


def test_classical_plan_matches_the_oracle():
    text = CLASSICAL.format(
        crystals='"8 MHz", "11.0592 MHz", "14.7456 MHz"', bitrate='"250 kHz"', prescaler="1..8"
    )
    scenario = scenario_from(text)
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    assert best_key(scenario, result.precision)[0] == result.plans[0].worst_steps
    assert_plans_recheck(scenario, result)


FD = """
[sources.main]
kind = "oscillator"
choose = ["20 MHz", "40 MHz", "80 MHz"]
[peripherals.node]
kind = "can-fd"
from = "main"
bitrate = "500 kHz"
prescaler = "1..4"
data_bitrate = "2 MHz"
data_prescaler = "1..2"
"""


def test_can_fd_nominal_and_data_phases_end_to_end():
    # By hand: 40 MHz / 2 Mbit/s = 20 = 20 tq × prescaler 1 or 10 tq × prescaler 2; every
    # crystal here gives both phases exactly.
    scenario = scenario_from(FD)
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    assert best_key(scenario, result.precision)[0] == result.plans[0].worst_steps
    for ranked in result.plans:
        nominal, data = ranked.evaluation.checks
        assert nominal.error == 0 and data.error == 0
        assert nominal.requirement.label == "500 kbit/s nominal"
        assert data.requirement.label == "2 Mbit/s data"
        timing = BitTiming(**dict(data.option.settings))
        assert data.allowance == data_tolerance(timing)
        assert Fraction(70, 100) <= timing.sample_point <= Fraction(80, 100)
        assert evaluate_plan(scenario, ranked.plan).feasible


def test_an_allowance_in_the_scenario_overrides_every_timing():
    text = CLASSICAL.format(crystals='"16 MHz"', bitrate=500000, prescaler="1..4")
    scenario = scenario_from(text + 'allowance = "0.1 %"\n')
    (requirement,) = scenario.peripherals[0].requirements
    assert {option.allowance for option in requirement.options} == {Fraction(1, 1000)}
    assert requirement.allowance_basis == "set in the scenario"


@pytest.mark.parametrize(
    ("extra", "key", "words"),
    [
        ('bitrate = "2 MHz"\n', "bus.bitrate", "above 1 Mbit/s"),
        ('sample_piont = "80 %"\n', "bus.sample_piont", "did you mean 'sample_point'"),
        ('quanta = "8..9"\nsample_point = "87.5 %"\n', "bus.quanta", "sample point within"),
        ('sample_point = "120 %"\n', "bus.sample_point", "between 0 and 100 %"),
    ],
)
def test_bad_can_keys_are_located(extra, key, words):
    text = (
        '[sources.main]\nkind = "crystal"\nchoose = ["16 MHz"]\n'
        '[peripherals.bus]\nkind = "can"\nfrom = "main"\n'
    )
    if "bitrate" not in extra:
        text += "bitrate = 500000\n"
    with pytest.raises(ScenarioError, match=words) as caught:
        scenario_from(text + extra)
    assert key in str(caught.value)


def test_data_bit_rate_below_the_nominal_is_refused():
    # ISO 11898-1:2015 (from memory; clause not confirmed): the data bit time is as long as
    # the nominal one or shorter.
    with pytest.raises(ScenarioError, match="data_bitrate.*below the nominal"):
        scenario_from(FD.replace('data_bitrate = "2 MHz"', 'data_bitrate = "250 kHz"'))
