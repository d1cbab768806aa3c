"""The command line: ``plan`` end to end, JSON recomputed outside, and bad input."""

import json
import subprocess
import sys
from fractions import Fraction

import pytest

from tests.helpers import run_cli


def test_plan_on_the_default_scenario_is_optimal(capsys):
    status, out, _ = run_cli(capsys, "plan", "--top", "2")
    assert status == 0
    assert "optimal (every stage proved)" in out
    assert "Weather-station hub" in out


def test_plan_json_can_be_recomputed_from_its_settings(capsys):
    status, out, _ = run_cli(capsys, "plan", "--top", "2", "--json")
    assert status == 0
    data = json.loads(out)
    assert data["status"] == "optimal"
    for plan in data["plans"]:
        settings = plan["settings"]
        clocks = {name: Fraction(value) for name, value in plan["clocks"].items()}
        # An outside recomputation: the default board's tree, walked by hand.
        main_hz = Fraction(plan["sources"]["main"]["hz"])
        system = main_hz / settings["system.reference_divider"] * settings["system.multiplier"]
        assert clocks["system"] == system
        assert clocks["core"] == system / settings["core.divide"]
        assert clocks["bus"] == clocks["core"] / settings["bus.divide"]
        assert clocks["usb_clock"] == system / settings["usb_clock.divide"]
        for check in plan["peripherals"]["console"]:
            baud = (
                clocks["bus"] * 16 / check["divisor"]
            )  # 4 fraction bits: divisor counts 1/16ths × 16
            assert Fraction(check["achieved_hz"]) == baud
            assert check["worst_case_ppm"] <= check["allowance_ppm"]


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        ('title = "x"\n[sources.main]\nkind = "crystal"\nchoose = ["12"]\n', "sources.main.choose"),
        (
            'title = "x"\n[sources.main]\nkind = "cristal"\nchoose = ["12 MHz"]\n',
            "did you mean 'crystal'",
        ),
        ("title = \n", "not valid TOML"),
    ],
)
def test_bad_file_gets_one_line_and_exit_2(tmp_path, capsys, content, expected):
    path = tmp_path / "board.toml"
    path.write_text(content)
    status, out, err = run_cli(capsys, "plan", str(path))
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1
    assert str(path) in err and expected in err
    assert path.read_text() == content  # the user's file is untouched


def test_missing_file_exits_2(capsys, tmp_path):
    status, _, err = run_cli(capsys, "plan", str(tmp_path / "missing.toml"))
    assert status == 2
    assert "no such file" in err


def test_bad_option_value_exits_2(capsys):
    status, _, err = run_cli(capsys, "plan", "--top", "0")
    assert status == 2
    assert "--top" in err


def test_console_script_runs_without_traceback(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text('[sources.main]\nkind = "crystal"\nchoose = "catalog"\ntolerance = "20 ppn"\n')
    completed = subprocess.run(
        [sys.executable, "-m", "clockplan", "plan", str(path)],
        capture_output=True,
        text=True,
        check=False,
    )
    assert completed.returncode == 2
    assert "Traceback" not in completed.stderr
    assert "sources.main.tolerance" in completed.stderr
