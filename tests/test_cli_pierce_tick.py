"""Command-line tests of ``clockplan pierce`` and ``clockplan tick``."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from clockplan.cli import main
from tests.helpers import assert_screen_as_recorded

REPOSITORY = Path(__file__).resolve().parent.parent

SIXTEEN_MHZ = ["pierce", "--frequency", "16 MHz", "--load", "12 pF", "--stray", "3 pF"]


def run_cli(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run clockplan in-process; return the exit status, stdout and stderr."""
    status = main(list(argv))
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_pierce_report_for_a_16_mhz_crystal(capsys: pytest.CaptureFixture[str]) -> None:
    # Source: crystal makers' load-capacitance notes, C1 = C2 = 2·(CL − C_stray): 12 pF load,
    # 3 pF stray → two 18 pF capacitors.
    status, out, err = run_cli(
        capsys,
        *SIXTEEN_MHZ,
        "--shunt",
        "5 pF",
        "--motional",
        "7 fF",
        "--esr",
        "40 ohm",
        "--gm",
        "10 mA/V",
        "--swing",
        "1 V",
        "--max-drive",
        "100 uW",
    )
    assert (status, err) == (0, "")
    assert "18 pF + 18 pF" in out
    assert "gain margin" in out and "drive level" in out
    assert "will likely not start" not in out
    last_lines = " ".join(out.split())
    assert last_lines.endswith(
        "Caution: Check the crystal's and the chip's datasheets for load capacitance, drive "
        "level and start-up margin, and prototype before production."
    )


def test_pierce_default_stray_is_marked_as_an_assumption(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # The 3 pF default is common practice, no source; the report must say so.
    status, out, _ = run_cli(capsys, "pierce", "--frequency", "16 MHz", "--load", "12 pF")
    assert status == 0
    assert "common practice, no source" in out


def test_pierce_warns_when_the_gain_margin_is_too_low(capsys: pytest.CaptureFixture[str]) -> None:
    # Source: a microcontroller maker's oscillator design guide (an application note), worked
    # in a public
    # design notebook: ESR 80 Ω, 16 MHz, C0 7 pF, CL 9 pF → gm_crit 0.8279 mA/V; 3 mA/V is a
    # margin of 3.6, below the guide's 5.
    status, out, _ = run_cli(
        capsys,
        "pierce",
        "--frequency",
        "16 MHz",
        "--load",
        "9 pF",
        "--shunt",
        "7 pF",
        "--esr",
        "80 ohm",
        "--gm",
        "3 mA/V",
    )
    assert status == 1
    assert "will likely not start reliably" in " ".join(out.split())


def test_pierce_json_reproduces_the_worked_gain_margin(capsys: pytest.CaptureFixture[str]) -> None:
    # Source: the design notebook's worked case: gm 17 mA/V over gm_crit 0.8279 mA/V = 20.53.
    # 9 pF with 3 pF stray takes two 12 pF capacitors (an E12 value), so the load is exact.
    status, out, _ = run_cli(
        capsys,
        "pierce",
        "--frequency",
        "16 MHz",
        "--load",
        "9 pF",
        "--shunt",
        "7 pF",
        "--esr",
        "80 ohm",
        "--gm",
        "17 mA/V",
        "--json",
    )
    report = json.loads(out)
    assert status == 0
    assert report["capacitors_pf"] == ["12", "12"] and report["built_load_pf"] == "9"
    assert report["critical_gm_a_per_v"] == pytest.approx(0.8279e-3, abs=5e-8)
    assert report["gain_margin"] == pytest.approx(20.53, abs=5e-3)
    assert report["starts_reliably"] is True


def test_pierce_unequal_pair_in_json(capsys: pytest.CaptureFixture[str]) -> None:
    # 12.5 pF with 3 pF stray: E12 15 pF + 27 pF gives 405/42 + 3 = 177/14 pF.
    _, out, _ = run_cli(
        capsys, "pierce", "--frequency", "8 MHz", "--load", "12.5 pF", "--unequal", "--json"
    )
    report = json.loads(out)
    assert report["capacitors_pf"] == ["15", "27"] and report["built_load_pf"] == "177/14"


def test_pierce_flags_excess_drive_level(capsys: pytest.CaptureFixture[str]) -> None:
    # By hand from DL = I_rms²·ESR (crystal makers' guides), I_rms = π·F·C·V_pp/√2 (from
    # memory): 8 MHz, ESR 50 Ω, 20 pF, 1 Vpp → 6.32 µW > 5 µW.
    status, out, _ = run_cli(
        capsys,
        "pierce",
        "--frequency",
        "8 MHz",
        "--load",
        "12 pF",
        "--shunt",
        "3 pF",
        "--esr",
        "50 ohm",
        "--swing",
        "1 V",
        "--node-capacitance",
        "20 pF",
        "--max-drive",
        "5 uW",
        "--json",
    )
    report = json.loads(out)
    assert status == 1
    assert report["drive_level_w"] == pytest.approx(6.32e-6, rel=3e-3)
    assert any("drive level" in warning for warning in report["warnings"])


def test_tick_watch_crystal_is_exact(capsys: pytest.CaptureFixture[str]) -> None:
    # Arithmetic: 32 768 = 2**15, the reason watch crystals run at 32.768 kHz.
    status, out, err = run_cli(capsys, "tick", "--source", "32.768 kHz", "--chain", "pow2 15")
    assert (status, err) == (0, "")
    assert "exact (1 setting)" in out and "32768" in out


def test_tick_json_lists_exact_prescaler_settings(capsys: pytest.CaptureFixture[str]) -> None:
    # arithmetic: 8 MHz = 125 × 64000 = 128 × 62500 within 1..128 and 1..65536.
    _, out, _ = run_cli(
        capsys, "tick", "--source", "8 MHz", "--chain", "1..128 x 1..65536", "--json"
    )
    report = json.loads(out)
    assert report["exact"] is True and report["exact_settings"] == 2
    assert [s["divisors"] for s in report["settings"]] == [[125, 64000], [128, 62500]]
    assert report["settings"][0]["tick_hz"] == "1"


def test_tick_40_khz_through_binary_stages_says_not_exact(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # arithmetic: 40 000 = 2**6 · 625, so a binary chain misses and 64 × 625 would hit.
    status, out, _ = run_cli(capsys, "tick", "--source", "40 kHz", "--chain", "pow2 15")
    flat = " ".join(out.split())
    assert status == 0
    assert "not exact" in flat and "625/512 Hz" in flat
    assert '"pow2 6 x 625" would' in flat


def test_tick_without_chain_suggests_an_exact_one(capsys: pytest.CaptureFixture[str]) -> None:
    _, out, _ = run_cli(capsys, "tick", "--source", "40 kHz", "--json")
    report = json.loads(out)
    assert report["chain_suggested"] is True and report["chain"] == ["pow2 6", "625"]
    assert report["exact"] is True


def test_tick_drift_for_20_ppm(capsys: pytest.CaptureFixture[str]) -> None:
    # Arithmetic: 20 ppm × 86 400 s = 1.728 s/day. 50 000 Hz ÷ 49 999 is 1/49 999 fast,
    # about 20.0004 ppm.
    _, out, _ = run_cli(capsys, "tick", "--source", "50 kHz", "--chain", "49999", "--json")
    report = json.loads(out)
    assert report["drift"]["error"] == "1/49999"
    assert report["drift"]["seconds_per_day"] == pytest.approx(1.728, abs=1e-4)


def test_tick_calibration_window_in_seconds(capsys: pytest.CaptureFixture[str]) -> None:
    # Worked by hand (an example of our own, no default window): a 60 s window of a
    # 32.768 kHz source holds 60 × 32 768 = 1 966 080 cycles, so one added or skipped
    # cycle moves the rate by 10^6 / 1 966 080 = 0.508626302083… ppm; +12.3 ppm is
    # 24.18 steps, cancelled best by skipping 24.
    _, out, _ = run_cli(
        capsys,
        "tick",
        "--source",
        "32.768 kHz",
        "--chain",
        "pow2 15",
        "--calibrate",
        "+12.3 ppm",
        "--window",
        "60 s",
        "--max-steps",
        "511",
        "--json",
    )
    calibration = json.loads(out)["calibration"]
    assert calibration["window_cycles"] == 1_966_080
    assert calibration["step_ppm"] == pytest.approx(0.508626302083333, rel=1e-12)
    assert calibration["setting"]["action"] == "skip" and calibration["setting"]["steps"] == 24


def test_tick_tuning_fork_at_45_c(capsys: pytest.CaptureFixture[str]) -> None:
    # Source: a tuning-fork crystal datasheet's worked example: k = −0.030 at 45 °C → −12.0 ppm.
    _, out, _ = run_cli(
        capsys,
        "tick",
        "--source",
        "32.768 kHz",
        "--chain",
        "pow2 15",
        "--curve",
        "tuning-fork",
        "--coefficient=-0.030",
        "--temperature",
        "45..45",
        "--json",
    )
    worst = json.loads(out)["temperature"]["worst"]
    assert worst["error_ppm"] == pytest.approx(-12.0)
    assert worst["seconds_per_day"] == pytest.approx(-12.0 * 0.0864)


def test_tick_report_shows_temperature_and_calibration(
    capsys: pytest.CaptureFixture[str],
) -> None:
    status, out, _ = run_cli(
        capsys,
        "tick",
        "--source",
        "32.768 kHz",
        "--chain",
        "pow2 15",
        "--curve",
        "tuning-fork",
        "--temperature=-20..70",
        "--calibrate",
        "+12.3 ppm",
        "--window",
        "2**20 cycles",
    )
    assert status == 0
    assert "(worst)" in out and "average" in out
    assert "skip 13 cycles per window" in out


@pytest.mark.parametrize(
    ("argv", "option"),
    [
        (["pierce", "--frequency", "16 MHz", "--load", "-12 pF"], "--load"),
        (["pierce", "--frequency", "16 MHz", "--load", "12 pF", "--stray", "12 pF"], "--stray"),
        (["pierce", "--frequency", "16 MHz", "--load", "12 pF", "--stray", "15 pF"], "--stray"),
        (["pierce", "--frequency", "0 MHz", "--load", "12 pF"], "--frequency"),
        (["pierce", "--frequency", "-16 MHz", "--load", "12 pF"], "--frequency"),
        (["pierce", "--frequency", "16 furlongs", "--load", "12 pF"], "--frequency"),
        (["pierce", "--load", "12 pF"], "--frequency"),
        (
            [
                "pierce",
                "--frequency",
                "16 MHz",
                "--load",
                "12 pF",
                "--shunt",
                "5 pF",
                "--esr",
                "40 parsecs",
            ],
            "--esr",
        ),
        (["pierce", "--frequency", "16 MHz", "--load", "12 pF", "--esr", "40 ohm"], "--esr"),
        (["pierce", "--frequency", "16 MHz", "--load", "12 pF", "--series", "E96"], "--series"),
        (["tick", "--chain", "pow2 15"], "--source"),
        (["tick", "--source", "0 Hz", "--chain", "pow2 15"], "--source"),
        (["tick", "--source", "32.768 kHz", "--chain", "128"], "--chain"),
        (["tick", "--source", "32.768 kHz", "--chain", "1..0"], "--chain"),
        (["tick", "--source", "32.768 kHz", "--chain", "pow2 15", "--rate", "0 Hz"], "--rate"),
        (["tick", "--source", "32.768 kHz", "--calibrate", "+3 ppm"], "--window"),
        (
            ["tick", "--source", "32.768 kHz", "--calibrate", "+3 ppm", "--window", "3 parsecs"],
            "--window",
        ),
        (["tick", "--source", "32.768 kHz", "--window", "0.3 s"], "--window"),
        (["tick", "--source", "32.768 kHz", "--curve", "tuning-fork"], "--temperature"),
        (
            ["tick", "--source", "32.768 kHz", "--curve", "tuning-fork", "--temperature", "70..20"],
            "--temperature",
        ),
        (
            ["tick", "--source", "32.768 kHz", "--band", "twenty", "--temperature", "0..50"],
            "--band",
        ),
    ],
)
def test_bad_input_exits_2_with_one_line(
    capsys: pytest.CaptureFixture[str], argv: list[str], option: str
) -> None:
    status, out, err = run_cli(capsys, *argv)
    assert status == 2 and out == ""
    assert err.count("\n") == 1 and err.startswith(f"clockplan: {option}: ")
    assert "Traceback" not in err


def test_subprocess_tick_watch_crystal() -> None:
    # Arithmetic: 32 768 = 2**15, the reason watch crystals run at 32.768 kHz.
    result = subprocess.run(
        [
            sys.executable,
            "-m",
            "clockplan",
            "tick",
            "--source",
            "32.768 kHz",
            "--chain",
            "pow2 15",
            "--json",
        ],
        capture_output=True,
        text=True,
        cwd=REPOSITORY,
        check=False,
    )
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    assert report["exact"] is True and report["settings"][0]["tick_hz"] == "1"


def test_subprocess_bad_input_is_one_line_without_traceback() -> None:
    result = subprocess.run(
        [
            sys.executable,
            "-m",
            "clockplan",
            "pierce",
            "--frequency",
            "16 MHz",
            "--load",
            "12 pF",
            "--stray",
            "20 pF",
        ],
        capture_output=True,
        text=True,
        cwd=REPOSITORY,
        check=False,
    )
    assert result.returncode == 2 and result.stdout == ""
    assert result.stderr.count("\n") == 1 and "Traceback" not in result.stderr


@pytest.mark.parametrize(
    ("argv", "line"),
    [
        (
            ["tick", "--source", "8 MHz", "--chain", "1|8|64 x 1..65535"],
            "clockplan: --chain: '1|8|64' uses a bar; separate alternatives with commas\n",
        ),
        (
            ["tick", "--source", "8 MHz", "--chain", "128 x x 256"],
            "clockplan: --chain: '128 x x 256' has an empty stage; join stages with \" x \"\n",
        ),
        (
            ["crystals", "--baud", "9600", "--divisor", "1|2|4"],
            "clockplan: --divisor: '1|2|4' uses a bar; separate alternatives with commas\n",
        ),
        (
            ["pierce", "--frequency", "16 MHz", "--load", "12 pF", "--esr", "40 mohm"],
            "clockplan: --esr: '40 mohm' has unit 'mohm'; expected one of ohm, ohms, Ω, "
            "kohm, kohms, kΩ, Mohm, Mohms, MΩ\n",
        ),
    ],
)
def test_one_grammar_refuses_with_one_located_line(
    argv: list[str], line: str, capsys: pytest.CaptureFixture[str]
) -> None:
    status, out, err = run_cli(capsys, *argv)
    assert (status, out, err) == (2, "", line)


def test_a_comma_gives_a_stage_its_alternatives_and_x_joins_stages(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # arithmetic: 8 MHz = 256 × 31250; 1024 leaves 7812.5 and 64 leaves 125000 > 65535.
    argv = ["tick", "--source", "8 MHz", "--chain", "1,8,64,256,1024 x 1..65535", "--json"]
    _, out, _ = run_cli(capsys, *argv)
    report = json.loads(out)
    assert report["chain"] == ["1,8,64,256,1024", "1..65535"]
    assert [setting["divisors"] for setting in report["settings"]] == [[256, 31250]]
    _, out, _ = run_cli(capsys, "tick", "--source", "1024 Hz", "--chain", "512,1024", "--json")
    report = json.loads(out)
    assert report["chain"] == ["512,1024"] and report["setting_count"] == 2
    assert [setting["divisors"] for setting in report["settings"]] == [[1024]]


def test_crystals_divisor_list_is_the_scenario_list(capsys: pytest.CaptureFixture[str]) -> None:
    argv = ["crystals", "--baud", "9600", "--divisor", "1,2,4", "--candidates", "1 MHz", "--json"]
    _, out, _ = run_cli(capsys, *argv)
    assert json.loads(out)["structure"]["divisor"] == "1,2,4"


SCREENS = {
    "pierce": (
        *("pierce", "--frequency", "16 MHz", "--load", "12 pF", "--stray", "3 pF"),
        *("--shunt", "5 pF", "--motional", "7 fF", "--esr", "40 ohm", "--unequal"),
    ),
    "tick": (
        *("tick", "--source", "40 kHz", "--window", "60 s", "--calibrate", "+3 ppm"),
        *("--curve", "tuning-fork", "--temperature=-40..85"),
    ),
}


@pytest.mark.parametrize("width", [80, 120])
@pytest.mark.parametrize("screen", sorted(SCREENS))
def test_the_screen_is_exactly_as_recorded(
    screen: str, width: int, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # Every figure whole at 80 and 120 columns (CLOCKPLAN_WRITE_RENDERED=1 records anew).
    monkeypatch.setenv("COLUMNS", str(width))
    status, out, _ = run_cli(capsys, *SCREENS[screen])
    assert status == 0
    assert_screen_as_recorded(out, screen, width)
