"""Ethernet reference clocks: rates and allowances by interface, and plans end to end."""

from fractions import Fraction

import pytest

from clockplan.evaluate import evaluate_plan
from clockplan.peripherals.ethernet import KINDS, REFERENCES
from clockplan.solve import Status, search
from tests.helpers import scenario_from
from tests.oracle import best_key


@pytest.mark.parametrize(
    ("kind", "rate", "ppm"),
    [
        # Source: IEEE 802.3 Clause 24/25 (100BASE-TX, 125 MBd = 5 × 25 MHz, ±50 ppm; clause
        # numbers from memory); NIC design guides state ±50 ppm "to comply with IEEE
        # specifications for 10/100 and 10/100/1000BASE-T" (network-controller makers'
        # design guides).
        ("ethernet-mii", 25_000_000, 50),
        # Source: RMII Consortium RMII specification rev 1.2: one 50 MHz reference for MAC and
        # PHY (seen in PHY datasheets); ±50 ppm from memory.
        ("ethernet-rmii", 50_000_000, 50),
        # Source: IEEE 802.3 Clause 35 (GMII) / Clause 40 (1000BASE-T, 125 MBd): ±100 ppm
        # (from memory).
        ("ethernet-rgmii", 125_000_000, 100),
    ],
)
def test_reference_rate_and_allowance(kind, rate, ppm):
    reference = REFERENCES[kind]
    assert reference.rate == rate
    assert reference.tolerance == Fraction(ppm, 10**6)
    assert kind in KINDS


def test_100base_tx_symbol_rate_is_five_times_the_mii_reference():
    # Source: IEEE 802.3 100BASE-TX (clause numbers from memory): 4B/5B at 100 Mb/s gives
    # 125 MBd = 25 MHz × 5; by hand, ±50 ppm of 25 MHz is ±1 250 Hz.
    mii = REFERENCES["ethernet-mii"]
    assert 5 * mii.rate == 125_000_000
    assert mii.rate * mii.tolerance == 1250


BOARD = """
[sources.main]
kind = "crystal"
choose = ["12 MHz", "25 MHz"]
tolerance = "10 ppm"
stability = "10 ppm"
aging = "5 ppm"
[plls.net]
from = "main"
reference_divider = "1..5"
pfd = "5 MHz .. 25 MHz"
multiplier = "4..20"
vco = "200 MHz .. 500 MHz"
[dividers.rmii_clock]
from = "net"
divide = "2..10"
[peripherals.phy]
kind = "ethernet-rmii"
from = "rmii_clock"
[peripherals.mac]
kind = "ethernet-mii"
from = "main"
"""


def test_one_25_mhz_crystal_serves_mii_and_rmii_exactly():
    # By hand: one 25 MHz crystal serves 100BASE-TX (×5, IEEE 802.3) and RMII (×2, RMII rev
    # 1.2's 50 MHz) with no ratio error. The 12 MHz candidate cannot give the MII 25 MHz.
    scenario = scenario_from(BOARD)
    result = search(scenario, top=2)
    assert result.status is Status.OPTIMAL
    assert len(result.plans) == 1
    best = result.plans[0]
    assert best.plan.sources["main"] == 25_000_000
    assert [check.error for check in best.evaluation.checks] == [0, 0]
    assert best_key(scenario, result.precision)[0] == best.worst_steps
    evaluation = evaluate_plan(scenario, best.plan)
    assert evaluation.violations == ()
    assert evaluation.feasible


def test_a_loose_crystal_cannot_serve_rmii():
    # A default crystal budget (20 + 30 ppm + aging) is already past ±50 ppm: proved infeasible.
    text = BOARD.replace('tolerance = "10 ppm"\nstability = "10 ppm"\naging = "5 ppm"\n', "")
    result = search(scenario_from(text), top=1)
    assert result.status is Status.INFEASIBLE


def test_rgmii_allowance_can_follow_the_design_guides():
    scenario = scenario_from("""
        [sources.main]
        kind = "oscillator"
        choose = ["125 MHz"]
        [peripherals.gig]
        kind = "ethernet-rgmii"
        from = "main"
        allowance = "50 ppm"
    """)
    (requirement,) = scenario.peripherals[0].requirements
    assert requirement.allowance == Fraction(50, 10**6)
    assert requirement.target == 125_000_000
    assert requirement.allowance_basis == "set in the scenario"
