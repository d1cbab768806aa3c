"""The quick commands stay exact and finite whatever the size of what they are asked."""

from __future__ import annotations

from fractions import Fraction

import pytest

from clockplan.cli import main
from clockplan.quantities import format_hz, format_ppm, format_relative


@pytest.mark.parametrize(
    ("value", "shown"),
    [
        (Fraction(10) ** 20, "100000000000 GHz"),
        (Fraction(12345678) * 10**18, "1.234568e16… GHz"),
        (Fraction(99999999999999999) * 10**9, "1e17… GHz"),
        (-(Fraction(10) ** 30), "-1e21 GHz"),
        (Fraction(3) ** 5000, "4.038998e2376… GHz"),  # past a float, past 4300 digits
    ],
)
def test_huge_frequencies_are_shown_in_powers_of_ten(value, shown):
    assert format_hz(value) == shown


def test_relative_figures_past_a_float_saturate_instead_of_raising():
    assert format_ppm(Fraction(10) ** 400) == "inf ppm"
    assert format_relative(-(Fraction(10) ** 400)) == "-inf %"


def test_crystals_with_300_baud_rates_answers(capsys):
    rates = ",".join(str(1200 + k) for k in range(300))
    status = main(["crystals", "--baud", rates])
    out, err = capsys.readouterr()
    assert status in (0, 1)
    assert "e403… GHz" in out and "(the lcm of the divided clocks)" in out
    assert err == ""


@pytest.mark.parametrize(
    "window", ["2**99999 cycles", "2**99999999999999999999 cycles", "9" * 30 + " cycles", "1e99 s"]
)
def test_a_window_past_2_to_the_62_cycles_is_one_line(window, capsys):
    argv = ["tick", "--source", "32.768 kHz", "--chain", "pow2 15", "--calibrate", "5 ppm"]
    status = main([*argv, "--window", window])
    _, err = capsys.readouterr()
    assert status == 2
    assert err == f"clockplan: --window: {window!r} is longer than 2**62 source cycles\n"


def test_tick_lists_at_most_1000_settings(capsys):
    status = main(["tick", "--source", "1 mHz", "--list", "999999999999999999"])
    _, err = capsys.readouterr()
    assert status == 2
    assert err == "clockplan: --list: '999999999999999999' is more than 1000\n"
