"""Command-line tests of ``clockplan crystals``: the quick question without a scenario file."""

from __future__ import annotations

import json
import re
from fractions import Fraction
from typing import Any

import pytest

from clockplan.cli import build_parser, main
from tests.helpers import assert_screen_as_recorded

MHZ = 10**6


def run_cli(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run clockplan in-process; return the exit status, stdout and stderr."""
    status = main(list(argv))
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def run_json(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, dict[str, Any]]:
    status, out, err = run_cli(capsys, "crystals", *argv, "--json")
    assert err == ""
    return status, json.loads(out)


def exact_frequencies(report: dict[str, Any]) -> list[Fraction]:
    return [Fraction(row["frequency_hz"]) for row in report["ranked"] if row["exact"]]


def test_standard_bauds_are_exact_on_the_multiples_of_1_8432_mhz(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # Common practice, no source: 1.8432 MHz = 16 × 115200, and the lcm of
    # 16 × {9600, 19200, 38400, 57600, 115200} is 1 843 200, so with whole divisors at 16× the
    # exact oscillators in 1..25 MHz are 1.8432, 3.6864, … 23.9616 MHz: 13 of them.
    status, report = run_json(
        capsys,
        "--baud",
        "9600,19200,38400,57600,115200",
        "--range",
        "1 MHz..25 MHz",
        "--step",
        "100 Hz",
        "--top",
        "20",
    )
    assert status == 0
    assert report["candidates"]["count"] == 240_001
    assert report["exact_multiple_hz"] == "1843200"
    assert report["exact_count"] == 13
    assert exact_frequencies(report) == [1_843_200 * k for k in range(1, 14)]
    assert exact_frequencies(report)[-1] == Fraction("23.9616") * MHZ
    assert [row["exact"] for row in report["ranked"]] == [True] * 13 + [False] * 7


def test_standard_bauds_text_table(capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = run_cli(
        capsys,
        "crystals",
        "--baud",
        "9600,115200",
        "--range",
        "1 MHz..25 MHz",
        "--top",
        "3",
    )
    assert status == 0
    text = " ".join(out.split())
    assert "exact for every rate: 13 candidates" in text
    assert "must be a multiple of 1.8432 MHz (the lcm of the divided clocks)" in text
    assert "1 1.8432 MHz exact 0" in text  # rank, oscillator, worst share, worst error
    assert "÷12 ÷1 0 0" in text  # per rate: divisor over error


@pytest.mark.parametrize(
    "where",
    [["--catalog"], [], ["--range", "1 MHz..30 MHz", "--step", "100 Hz"]],
    ids=["catalog", "default catalog", "range"],
)
def test_48_khz_master_clock_crystals(capsys: pytest.CaptureFixture[str], where: list[str]) -> None:
    # Source: audio codec datasheets' master-clock tables: 256 × 48 kHz = 12.288 MHz,
    # 512 × 48 kHz = 24.576 MHz.
    status, report = run_json(capsys, "--fs", "48k", "--mclk", "256", *where)
    assert status == 0
    exact = exact_frequencies(report)
    assert Fraction(12_288_000) in exact and Fraction(24_576_000) in exact
    assert all(frequency % 12_288_000 == 0 for frequency in exact)
    if "--range" in where:
        assert report["exact_count"] == 2 and exact == [12_288_000, 24_576_000]


def test_44_1_and_48_khz_together_have_no_exact_crystal_under_30_mhz(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # Arithmetic: 44100/48000 = 147/160, so with whole divisors an exact
    # crystal must be a multiple of lcm(256 × 44100, 256 × 48000) = 1 806 336 000 Hz
    # (256 × 7 056 000), far above 30 MHz.
    status, report = run_json(capsys, "--fs", "44.1k,48k", "--range", "1 MHz..30 MHz")
    assert report["exact_multiple_hz"] == "1806336000" == str(256 * 7_056_000)
    assert report["exact_count"] == 0
    assert not any(row["exact"] for row in report["ranked"])
    assert status == 1  # and nothing is within ±0.1 % of both either
    _, out, _ = run_cli(capsys, "crystals", "--fs", "44.1k,48k", "--range", "1 MHz..30 MHz")
    assert "exact for every rate: none" in out
    assert "1.806336 GHz (the lcm of the divided clocks), above 30 MHz" in " ".join(out.split())


def test_usb_from_12_mhz_through_a_pll(capsys: pytest.CaptureFixture[str]) -> None:
    # arithmetic (the example of issue 9): 12 MHz / 1 × 16 = 192 MHz VCO, ÷ 4 = 48 MHz exactly;
    # the PFD range is widened to 12 MHz so that R = 1 is allowed.
    status, report = run_json(
        capsys,
        "--usb-full-speed",
        "--candidates",
        "12 MHz",
        "--pll",
        "--reference-divider",
        "1",
        "--multiplier",
        "16",
        "--pfd",
        "1 MHz..12 MHz",
    )
    assert status == 0
    (row,) = report["ranked"]
    assert row["exact"] and row["frequency_hz"] == "12000000"
    assert row["pll"] == {
        "reference_divider": 1,
        "multiplier": 16,
        "pfd_hz": "12000000",
        "vco_hz": "192000000",
    }
    assert row["rates"][0]["divisor"] == "4" and row["rates"][0]["achieved_hz"] == "48000000"


def test_usb_without_a_pll_needs_a_multiple_of_48_mhz(capsys: pytest.CaptureFixture[str]) -> None:
    # Source: USB 2.0 §7.1.11: ±0.05 % unless the device is full-speed only (then ±0.25 %).
    # 12 MHz divided can only go down, so it misses by 75 %.
    status, report = run_json(capsys, "--usb-full-speed", "--candidates", "12M,48M,25M")
    assert status == 0
    assert [row["frequency_hz"] for row in report["ranked"]] == ["48000000", "25000000", "12000000"]
    assert report["ranked"][2]["rates"][0]["error"] == "-3/4"
    assert report["rates"][0]["allowance"] == "1/2000"
    assert "high-speed-capable device" in report["rates"][0]["allowance_basis"]
    status, report = run_json(
        capsys, "--usb-full-speed", "--full-speed-only-device", "--candidates", "48M"
    )
    assert status == 0 and report["rates"][0]["allowance"] == "1/400"
    assert "full-speed-only device" in report["rates"][0]["allowance_basis"]


def test_json_figures_recompute_from_the_oscillator_and_divisor(
    capsys: pytest.CaptureFixture[str],
) -> None:
    # Everything needed to check a row is in the JSON: baud = f / (16 × divisor),
    # fs = f / (256 × divisor), error = achieved / wanted − 1.
    status, report = run_json(
        capsys,
        "--baud",
        "115200",
        "--fraction-bits",
        "4",
        "--fs",
        "48k",
        "--rate",
        "1kHz",
        "--candidates",
        "16 MHz,12.288 MHz,11.2896 MHz",
        "--allowance",
        "0.5 %",
    )
    wanted = {row["label"]: Fraction(row["rate_hz"]) for row in report["rates"]}
    factor = {"115200 baud": 16, "fs 48 kHz": 256, "1 kHz": 1}
    for row in report["ranked"]:
        frequency = Fraction(row["frequency_hz"])
        for rate in row["rates"]:
            achieved = frequency / (factor[rate["label"]] * Fraction(rate["divisor"]))
            assert Fraction(rate["achieved_hz"]) == achieved
            assert Fraction(rate["error"]) == achieved / wanted[rate["label"]] - 1
    assert report["rates"][1]["allowance"] == "1/200"
    # 12.288 MHz: fs and 1 kHz exact, 115200 baud at 107/16 is −0.31 % (inside ±2.24 %).
    assert status == 0 and report["ranked"][0]["frequency_hz"] == "12288000"
    assert report["ranked"][0]["rates"][0]["divisor"] == "107/16"


def test_exit_status_says_whether_the_best_fits(capsys: pytest.CaptureFixture[str]) -> None:
    # By hand: 8 MHz / (16 × 4) = 125 000 baud, +8.5 % off 115200: beyond any UART's allowance.
    assert run_cli(capsys, "crystals", "--baud", "115200", "--candidates", "8 MHz")[0] == 1
    assert run_cli(capsys, "crystals", "--baud", "115200", "--candidates", "7.3728 MHz")[0] == 0


def test_help_lists_the_options(capsys: pytest.CaptureFixture[str]) -> None:
    # argparse %-formats help texts: a bare "%" in one would crash --help.
    with pytest.raises(SystemExit) as stop:
        build_parser().parse_args(["crystals", "--help"])
    out = capsys.readouterr().out
    assert stop.value.code == 0
    assert "±0.05 % (USB 2.0 §7.1.11" in out and "±0.25 % applies" in out
    assert "default 0.1 %" in out
    for option in ("--baud", "--fs", "--mclk", "--rate", "--pll", "--range", "--step", "--json"):
        assert option in out


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--baud", "9600", "--candidates", "12 MHz,8 furlongs"], "--candidates: '8 furlongs'"),
        (["--fs", "48q"], "--fs: '48q' has unit 'q'"),
        (["--rate", "0"], "--rate: '0' is not a positive frequency"),
        (["--baud=-9600"], "--baud: '-9600' is not a positive frequency"),
        (["--baud", "9600", "--range", "50 MHz..1 MHz"], "--range: '50 MHz..1 MHz' runs backwards"),
        (["--baud", "9600", "--range", "1 MHz..2 MHz", "--step", "5 MHz"], "--step: a step of"),
        (["--baud", ","], "--baud: ',' is an empty list"),
        ([], "crystals: no rates given"),
        (["--baud", "9600", "--oversampling", "15"], "--oversampling: 15 is odd"),
        (["--baud", "9600", "--multiplier", "8..64"], "--multiplier: applies only with --pll"),
        (["--baud", "9600", "--step", "1 kHz"], "--step: applies only with --range"),
        (["--fs", "48k", "--allowance", "0 ppm"], "--allowance: '0 ppm' allows nothing"),
        (["--baud", "9600", "--divisor", "0..10"], "--divisor: 0 is below"),
        (["--baud", "9600", "--pll", "--vco", "96 MHz"], "--vco: '96 MHz' is not a range"),
        (["--baud", "9600", "--top", "0"], "--top: '0' is less than 1"),
        (["--baud", "9600", "--full-speed-only-device"], "--full-speed-only-device: says"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(
    capsys: pytest.CaptureFixture[str], argv: list[str], message: str
) -> None:
    status, out, err = run_cli(capsys, "crystals", *argv)
    assert status == 2 and out == ""
    assert err.startswith(f"clockplan: {message}")
    assert err.count("\n") == 1


SCREENS = {
    "crystals-uart": ("--baud", "9600,19200,38400,57600,115200", "--range", "1 MHz..25 MHz"),
    "crystals-mixed": ("--baud", "115200", "--usb-full-speed", "--fs", "48k,44.1k", "--catalog"),
    "crystals-pll": (
        *("--baud", "115200", "--usb-full-speed", "--fs", "48k,44.1k", "--pll", "--catalog"),
    ),
}
ELAPSED = re.compile(r"\(\d+\.\d\d s\)")


@pytest.mark.parametrize("width", [80, 120])
@pytest.mark.parametrize("screen", sorted(SCREENS))
def test_the_screen_is_exactly_as_recorded(
    screen: str, width: int, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # The ranking spreads its rate columns over several tables when the terminal is narrow,
    # so no number is folded or cut (CLOCKPLAN_WRITE_RENDERED=1 records the screens anew).
    monkeypatch.setenv("COLUMNS", str(width))
    status, out, _ = run_cli(capsys, "crystals", *SCREENS[screen], "--top", "3")
    assert status == (0 if screen == "crystals-uart" else 1)  # 1: no candidate meets them all
    assert_screen_as_recorded(ELAPSED.sub("(0.00 s)", out), screen, width)
