"""Every peripheral kind together: the showcase board, and the UART rates of MIDI and DMX512."""

from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.cli import main
from clockplan.evaluate import evaluate_plan
from clockplan.peripherals import READERS
from clockplan.scenario import load_scenario
from clockplan.solve import Status, search
from tests.helpers import scenario_from

SHOWCASE = Path(__file__).resolve().parent.parent / "scenarios" / "kinds-showcase.toml"


def test_16_mhz_gives_midi_and_dmx512_exactly():
    # Source: MIDI 1.0 (IEC 63035:2017 §4.1): 31.25 kBd ±1 %; DMX512-A (ANSI E1.11): 250 kBd.
    # By hand at 16× oversampling: 16 MHz / (16 × 32) = 31 250 and 16 MHz / (16 × 4) = 250 000.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["16 MHz"]
        [peripherals.midi]
        kind = "uart"
        from = "main"
        baud = [31250]
        allowance = "1 %"
        [peripherals.dmx]
        kind = "uart"
        from = "main"
        baud = [250000]
        stop_bits = 2
    """)
    checks = search(scenario, top=1).plans[0].evaluation.checks
    assert [check.achieved for check in checks] == [31_250, 250_000]
    assert [check.divisor // check.option.factor for check in checks] == [32, 4]
    assert all(check.requirement.unit == "baud" for check in checks)
    assert checks[0].allowance == Fraction(1, 100)


def test_every_kind_is_registered():
    expected = {
        "uart", "usb-full-speed", "usb-low-speed", "usb-high-speed", "tick", "clock", "can",
        "can-fd", "audio", "ethernet-mii", "ethernet-rmii", "ethernet-rgmii", "spi", "qspi",
        "sd", "i2c", "timer",
    }  # fmt: skip
    assert set(READERS) == expected


@pytest.fixture(scope="module")
def showcase():
    scenario = load_scenario(SHOWCASE)
    return scenario, search(scenario, top=1)


def test_showcase_solves_to_a_proven_optimum(showcase):
    scenario, result = showcase
    assert result.status is Status.OPTIMAL
    best = result.plans[0]
    evaluation = evaluate_plan(scenario, best.plan)
    assert evaluation.violations == ()
    assert evaluation.feasible
    kinds = {peripheral.kind for peripheral in scenario.peripherals}
    assert kinds == {"uart", "usb-full-speed", "can-fd", "audio", "ethernet-rmii", "sd", "timer"}
    labels = [check.requirement.label for check in evaluation.checks]
    assert "fs 48 kHz" in labels and "fs 44.1 kHz" in labels
    assert "500 kbit/s nominal" in labels and "2 Mbit/s data" in labels


def test_showcase_plan_prints_rates_errors_allowances_and_can_timing(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "220")
    status = main(["plan", str(SHOWCASE), "--top", "1"])
    out = capsys.readouterr().out
    assert status == 0
    assert "optimal (every stage proved)" in out
    for name in ("console", "usb", "vehicle_bus", "speaker", "ethernet", "card", "scheduler"):
        assert name in out
    for words in ("115200 baud", "48 MHz clock", "50 MHz reference", "1 kHz period", "SD clock"):
        assert words in out
    assert "tq, sample point" in out and "SJW" in out
    assert "50 ppm" in out  # the RMII allowance
    assert "FAIL" not in out
