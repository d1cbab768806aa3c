"""When no plan fits: the minimal conflicting set, known by hand, and the check command."""

import json

import pytest

from clockplan.cli import main
from clockplan.solve import Status, search
from clockplan.solve.explain import explain_infeasibility
from tests.helpers import board_text, scenario_from


def usb_board(kind: str) -> str:
    """boards/usb.toml with its main oscillator of the given kind."""
    return board_text("usb").replace('kind = "crystal"', f'kind = "{kind}"', 1)


def test_ceramic_resonator_against_usb_full_speed_names_only_usb():
    # Source: USB 2.0 §7.1.11: full speed sent by a host, hub or high-speed-capable device
    # (the default) within ±0.05 %; ceramic resonator datasheets give ±0.5 % initial
    # tolerance alone, so USB cannot hold whatever the dividers do, while the UART's ±2.2 %
    # can.
    scenario = scenario_from(usb_board("ceramic"))
    assert search(scenario, top=1).status is Status.INFEASIBLE
    explanation = explain_infeasibility(scenario)
    assert explanation.minimal
    assert explanation.conflict == ("usb (48 MHz clock) within 500 ppm worst case",)
    (relaxation,) = explanation.relaxations
    budget = scenario.source("main").budget  # 0.5 % + 0.3 % + 5 × 0.1 % = 1.3 %
    assert "allow 1.3 % on usb" in relaxation.advice
    assert "at most 500 ppm" in relaxation.advice
    (usb,) = [c for c in relaxation.evaluation.checks if c.requirement.peripheral == "usb"]
    assert usb.error == 0 and usb.worst_case == budget


def test_same_board_with_a_crystal_fits():
    scenario = scenario_from(usb_board("crystal"))
    assert search(scenario, top=1).plans[0].evaluation.feasible


def test_vco_range_no_multiplier_reaches_names_pfd_and_vco():
    # By hand: 12 MHz ÷ M with the PFD at most 2 MHz needs M ≥ 6, and × N ≤ 60 gives at most
    # 2 MHz × 60 = 120 MHz, below the VCO's 200 MHz floor. Either limit alone is fine.
    text = (
        usb_board("crystal")
        .replace('multiplier = "50..200"', 'multiplier = "50..60"')
        .replace('vco = "96 MHz .. 400 MHz"', 'vco = "200 MHz .. 400 MHz"')
    )
    explanation = explain_infeasibility(scenario_from(text))
    assert explanation.minimal
    assert set(explanation.conflict) == {"system PFD at most 2 MHz", "system VCO at least 200 MHz"}
    advice = {r.limit: r.advice for r in explanation.relaxations}
    assert advice["system PFD at most 2 MHz"].startswith("a plan exists where system PFD at ")
    assert advice["system PFD at most 2 MHz"].endswith(" MHz is above 2 MHz")


@pytest.fixture
def ceramic_file(tmp_path):
    path = tmp_path / "ceramic.toml"
    path.write_text(usb_board("ceramic"))
    return path


def test_check_exit_status_and_reason(ceramic_file, capsys):
    assert main(["check", str(ceramic_file)]) == 1
    out = capsys.readouterr().out
    assert out.startswith(f"no plan: {ceramic_file}: USB board")
    assert "usb (48 MHz clock) within 500 ppm worst case" in out


def test_check_json(ceramic_file, capsys):
    assert main(["check", str(ceramic_file), "--json"]) == 1
    data = json.loads(capsys.readouterr().out)
    assert data["status"] == "infeasible"
    assert data["meets_every_allowance"] is False
    assert data["explanation"]["conflict"] == ["usb (48 MHz clock) within 500 ppm worst case"]


def test_check_passes_on_the_default_board(capsys):
    assert main(["check"]) == 0
    assert capsys.readouterr().out.startswith("ok: ")


def test_check_bad_file_exits_2(tmp_path, capsys):
    path = tmp_path / "bad.toml"
    path.write_text("[sources.main]\nkind = 3\n")
    assert main(["check", str(path)]) == 2


def test_switching_to_the_internal_rc_names_every_rate_that_breaks_and_by_how_much():
    # The same board is exact with a crystal (above). The chip's internal RC oscillator
    # (default budget 1 % trimmed + 2 % over temperature = 3 %, typical figures, common
    # practice) cannot hold USB's ±0.05 % (USB 2.0 §7.1.11, the default for full speed) nor
    # the UART's 7/313 ≈ 2.2364 % per end (derived for 8N1 at 16×, tests/test_standards.py).
    scenario = scenario_from(usb_board("internal-rc"))
    explanation = explain_infeasibility(scenario)
    assert explanation.beyond_sources == (
        "usb (48 MHz clock) allows 500 ppm, but main (internal-rc) alone has a budget of 3 %: "
        "over by 2.95 %",
        "console (115200 baud) allows 2.2364 %, but main (internal-rc) alone has a budget of "
        "3 %: over by 0.7636 %",
    )
