"""Source keys in scenario files: curves, parts, the crystal circuit, alternatives and cost."""

from fractions import Fraction

import pytest

from clockplan.errors import ScenarioError
from clockplan.solve import Status, search
from tests.helpers import scenario_from

PPM = Fraction(1, 10**6)


def test_tuning_fork_curve_from_the_scenario():
    # k = −0.04 ppm/°C², turnover 20 °C, range −10..50 °C: the far end is 30 °C away,
    # 0.04 × 30² = 36 ppm (the tuning-fork parabola k·(T − T0)² of crystal datasheets).
    scenario = scenario_from("""
        [conditions]
        temperature = "-10..50"
        [sources.slow]
        kind = "tuning-fork"
        choose = ["32.768 kHz"]
        temperature_coefficient = "-0.04 ppm"
        turnover = 20
    """)
    assert scenario.source("slow").stability == 36 * PPM


def test_rc_oscillator_from_its_parts():
    # Source: published 555 astable worked answers of an online electronics calculator:
    # 1 kΩ, 10 kΩ, 100 nF → 686.998 Hz; 1 % resistors and 5 % capacitor → 6.33 % at worst.
    scenario = scenario_from("""
        [sources.rc]
        kind = "rc"
        parts = { r1 = "1 kohm", r2 = "10 kohm", capacitance = "100 nF" }
    """)
    source = scenario.source("rc")
    assert source.candidates[0] == Fraction("686.998")
    assert float(source.tolerance) == pytest.approx(1 / (0.99 * 0.95) - 1, abs=1e-6)


def test_lc_oscillator_from_its_parts():
    # Source: f = 1/(2π√(LC)): 10 µH and 100 pF → 5.0329 MHz.
    scenario = scenario_from("""
        [sources.tank]
        kind = "lc"
        parts = { inductance = "10 uH", capacitance = "100 pF", capacitor_tolerance = "2 %" }
    """)
    assert float(scenario.source("tank").candidates[0]) == pytest.approx(5_032_921.2, abs=0.1)


def test_parts_and_choose_together_are_refused():
    with pytest.raises(ScenarioError, match="give parts or choose, not both") as caught:
        scenario_from("""
            [sources.rc]
            kind = "rc"
            choose = ["7 kHz"]
            parts = { r1 = "1 kohm", r2 = "10 kohm", capacitance = "10 nF" }
        """)
    assert caught.value.key == "sources.rc.choose"


def test_crystal_circuit_pulling_enters_the_budget():
    # Source: crystal makers' pulling formula, by hand: Cm 5 fF, C0 2 pF, specified 10 pF, built
    # 18 pF + 18 pF with 3 pF stray = 12 pF → 29.76 ppm slow; the budget takes its size.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["16 MHz"]
        tolerance = "10 ppm"
        stability = "10 ppm"
        aging = "0 ppm"
        [sources.main.circuit]
        load = "10 pF"
        capacitors = ["18 pF", "18 pF"]
        stray = "3 pF"
        motional = "5 fF"
        shunt = "2 pF"
    """)
    source = scenario.source("main")
    assert float(source.pulling) * 1e6 == pytest.approx(29.76, abs=0.01)
    assert source.budget == 20 * PPM + source.pulling


ALTERNATIVES = """
rank_by = "{rank_by}"
[sources.crystal]
kind = "crystal"
choose = ["8 MHz"]
cost = 0.30
[sources.resonator]
kind = "ceramic"
choose = ["8 MHz"]
cost = 0.08
[muxes.main]
from = ["crystal", "resonator"]
[peripherals.console]
kind = "uart"
from = "main"
baud = [9600]
"""


@pytest.mark.parametrize(("rank_by", "chosen"), [("worst-share", "crystal"), ("cost", "resonator")])
def test_alternative_sources_by_worst_share_or_by_cost(rank_by, chosen):
    # The ceramic resonator's 1.3 % budget fits a UART's 2.29 % (8N1 at 16×); ranked by worst
    # share the crystal wins, ranked by cost the cheaper resonator does.
    scenario = scenario_from(ALTERNATIVES.format(rank_by=rank_by))
    result = search(scenario, top=1)
    assert result.status is Status.OPTIMAL
    assert result.plans[0].plan.settings["main.input"] == chosen


def test_cost_cannot_buy_a_rate_the_cheap_source_cannot_hold():
    # USB full speed (±0.25 %, USB 2.0 §7.1.11) rules the resonator out even by cost.
    text = (
        ALTERNATIVES.format(rank_by="cost")
        + """
[dividers.usb_clock]
from = "main"
divide = 1
[plls.usb_pll]
from = "usb_clock"
reference_divider = 1
multiplier = 6
vco = "48 MHz .. 48 MHz"
[peripherals.usb]
kind = "usb-full-speed"
from = "usb_pll"
"""
    )
    best = search(scenario_from(text), top=1).plans[0]
    assert best.plan.settings["main.input"] == "crystal"
