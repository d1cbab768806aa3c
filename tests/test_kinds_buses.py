"""SPI, quad SPI, SD and I2C: clocks at or below their maxima, as fast as allowed."""

from fractions import Fraction

import pytest

from clockplan.errors import ScenarioError
from clockplan.peripherals.base import CeilingRate
from clockplan.solve import Status, search
from tests.helpers import assert_plans_recheck, scenario_from
from tests.oracle import best_key


def bus_requirements(kind: str, mode: str, extra: str = "") -> list:
    scenario = scenario_from(f"""
        [sources.main]
        kind = "crystal"
        choose = ["16 MHz"]
        [peripherals.bus]
        kind = "{kind}"
        from = "main"
        mode = "{mode}"
        {extra}
    """)
    return list(scenario.peripherals[0].requirements)


@pytest.mark.parametrize(
    ("mode", "hertz"),
    [
        # Source: I2C-bus specification and user manual UM10204: standard ≤ 100 kbit/s,
        # fast ≤ 400 kbit/s, fast-mode plus ≤ 1 Mbit/s, high speed ≤ 3.4 Mbit/s, ultra fast
        # ≤ 5 Mbit/s.
        ("standard", 100_000),
        ("fast", 400_000),
        ("fast-plus", 1_000_000),
        ("high-speed", 3_400_000),
        ("ultra-fast", 5_000_000),
    ],
)
def test_i2c_mode_maxima(mode, hertz):
    (requirement,) = bus_requirements("i2c", mode)
    assert isinstance(requirement, CeilingRate) and requirement.maximum == hertz
    assert "UM10204" in requirement.allowance_basis


@pytest.mark.parametrize(
    ("mode", "hertz", "remembered"),
    [
        # Source: SD Association bus-speed figures and the SD Physical Layer Simplified
        # Specification's TRAN_SPEED values as reproduced in card datasheets: default speed
        # ≤ 25 MHz, high speed ≤ 50 MHz. Identification ≤ 400 kHz and SPI mode ≤ 25 MHz are
        # from memory, and the basis users see says so.
        ("default-speed", 25_000_000, False),
        ("high-speed", 50_000_000, False),
        ("identification", 400_000, True),
        ("spi", 25_000_000, True),
    ],
)
def test_sd_mode_maxima(mode, hertz, remembered):
    requirement = bus_requirements("sd", mode)[-1]
    assert isinstance(requirement, CeilingRate) and requirement.maximum == hertz
    assert ("(from memory)" in requirement.allowance_basis) is remembered


def test_sd_identification_clock_is_labelled_from_memory():
    first, _ = bus_requirements("sd", "default-speed")
    assert first.maximum == 400_000
    assert first.allowance_basis.endswith("identification ≤ 400 kHz (from memory)")


def test_spi_mode_starts_at_full_speed_unless_asked():
    # Source: a published answer on a programming mailing list (2016), pointing to the timing
    # appendix of an SD card maker's product manual: SPI-mode lines are push-pull, so the card
    # may be clocked at up to 25 MHz from the start; the slow start belongs to the SD bus
    # modes' open-drain identification. identification = true keeps the slow start that many
    # SPI-mode start-up guides ask for (100–400 kHz; common practice).
    assert [r.maximum for r in bus_requirements("sd", "spi")] == [25_000_000]
    slow = bus_requirements("sd", "spi", "identification = true")
    assert [r.maximum for r in slow] == [400_000, 25_000_000]
    only = bus_requirements("sd", "identification", "identification = true")
    assert [r.maximum for r in only] == [400_000]


BOARD = """
[sources.main]
kind = "crystal"
choose = ["8 MHz", "12 MHz", "16 MHz"]
[peripherals.sensor]
kind = "i2c"
from = "main"
mode = "standard"
divide = "20..200"
[peripherals.card]
kind = "sd"
from = "main"
mode = "default-speed"
divide = "1..64"
[peripherals.flash]
kind = "spi"
from = "main"
max = "5 MHz"
min = "1 MHz"
"""


def test_every_bus_stays_under_its_maximum_and_matches_the_oracle():
    scenario = scenario_from(BOARD)
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    assert best_key(scenario, result.precision)[0] == result.plans[0].worst_steps
    for evaluation in assert_plans_recheck(scenario, result):
        for check in evaluation.checks:
            assert isinstance(check.requirement, CeilingRate)
            budget = check.source_budget
            assert check.achieved * (1 + budget) <= check.requirement.maximum
            assert 0 < check.share <= 1


def test_the_search_runs_each_bus_as_fast_as_allowed():
    # By hand for 16 MHz: I2C ÷160 = 100 kHz exactly, but the crystal's budget pushes it over,
    # so ÷161 = 99.38 kHz; SD identification ÷40 = 400 kHz likewise → ÷41; SD transfer
    # ÷1 = 16 MHz; SPI needs ≤ 5 MHz → ÷4 = 4 MHz (÷2 = 8 MHz is over; "pow2 1..8" default).
    scenario = scenario_from(BOARD.replace('["8 MHz", "12 MHz", "16 MHz"]', '["16 MHz"]'))
    checks = search(scenario, top=1).plans[0].evaluation.checks
    divisors = {check.requirement.setting: check.divisor for check in checks}
    assert divisors == {
        "sensor.divide": 161,
        "card.identification_divide": 41,
        "card.divide": 1,
        "flash.divide": 4,
    }


def test_sd_adds_its_identification_clock_unless_told_not_to():
    text = BOARD.replace('mode = "default-speed"', 'mode = "high-speed"\nidentification = false')
    card = scenario_from(text).peripherals[1]
    assert [r.label for r in card.requirements] == ["SD clock (high-speed)"]
    card = scenario_from(BOARD).peripherals[1]
    assert [r.maximum for r in card.requirements] == [400_000, 25_000_000]


def test_a_floor_is_kept():
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["16 MHz"]
        [peripherals.flash]
        kind = "qspi"
        from = "main"
        max = "10 MHz"
        min = "9 MHz"
        divide = "1..4"
    """)
    assert search(scenario, top=1).status is Status.INFEASIBLE  # 8 MHz is under 9 MHz
    (requirement,) = scenario.peripherals[0].requirements
    assert requirement.floor == Fraction(9_000_000)


@pytest.mark.parametrize(
    ("table", "key", "words"),
    [
        ('kind = "spi"\n', "bus.max", "is missing"),
        ('kind = "i2c"\nmode = "fast"\nmax = "1 MHz"\n', "bus.max", "above the mode's 400 kHz"),
        ('kind = "i2c"\nmode = "fastplus"\n', "bus.mode", "did you mean 'fast-plus'"),
        ('kind = "spi"\nmax = "1 MHz"\nmin = "2 MHz"\n', "bus.min", "above the maximum"),
        ('kind = "spi"\nmax = "1 MHz"\nmode = "fast"\n', "bus.mode", "not a known key"),
    ],
)
def test_bad_bus_keys_are_located(table, key, words):
    text = '[sources.main]\nkind = "crystal"\nchoose = ["16 MHz"]\n[peripherals.bus]\n'
    with pytest.raises(ScenarioError, match=words) as caught:
        scenario_from(text + 'from = "main"\n' + table)
    assert key in str(caught.value)
