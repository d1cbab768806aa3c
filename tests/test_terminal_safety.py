"""Text from the user never reaches a terminal raw: control characters come out escaped.

A scenario title holding an OSC sequence (ESC ] 0 ; … BEL) would retitle the terminal,
and one holding CSI codes would recolour it; every output shows them as escapes.
"""

from __future__ import annotations

import json

import pytest

from clockplan.cli import main
from clockplan.scenario import default_scenario_path
from clockplan.text_safety import printable, quoted

HOSTILE = "Board \x1b]0;owned\x07 \x1b[31mred\x9b2J \u202eevil"
"""A title that changes the terminal's title and colours, clears it, and flips text."""

RAW = ("\x1b", "\x07", "\x9b", "\u202e")


def hostile_board(tmp_path):
    text = default_scenario_path().read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if not line.startswith("title")]
    path = tmp_path / "board.toml"
    path.write_text(f"title = {json.dumps(HOSTILE)}\n" + "\n".join(lines) + "\n", "utf-8")
    return path


def assert_no_raw_control(text: str) -> None:
    for character in RAW:
        assert character not in text, repr(text)


def test_printable_escapes_controls_and_keeps_ordinary_text():
    assert printable("12 MHz, µ, °C, é") == "12 MHz, µ, °C, é"
    assert printable(HOSTILE) == ("Board \\x1b]0;owned\\x07 \\x1b[31mred\\x9b2J \\u202eevil")
    assert quoted("x" * 5000).endswith("(5000 characters)'")


@pytest.mark.parametrize(
    "argv",
    [
        ["check"],
        ["show", "--top", "1"],
        ["diff"],
    ],
    ids=lambda argv: argv[0],
)
def test_a_hostile_title_is_escaped_on_the_terminal(tmp_path, capsys, argv):
    path = hostile_board(tmp_path)
    status = main([*argv[:1], str(path), *argv[1:], "--time-limit", "20"])
    out, err = capsys.readouterr()
    assert status in (0, 1)
    assert_no_raw_control(out + err)
    if argv[0] != "diff":
        assert "\\x1b]0;owned\\x07" in out


def test_a_hostile_title_is_escaped_in_every_export(tmp_path, capsys):
    path = hostile_board(tmp_path)
    exports = {name: tmp_path / f"out.{name}" for name in ("dot", "graphml", "svg", "header")}
    exports["report"] = tmp_path / "out.md"
    options = [item for name, target in exports.items() for item in (f"--{name}", str(target))]
    status = main(["show", str(path), "--top", "1", "--time-limit", "20", *options])
    out, err = capsys.readouterr()
    assert status == 0
    assert_no_raw_control(out + err)
    for target in exports.values():
        assert_no_raw_control(target.read_text(encoding="utf-8"))


def test_a_hostile_file_name_is_escaped_in_the_error_line(tmp_path, capsys):
    path = tmp_path / "board\x1b]0;owned\x07.toml"
    status = main(["check", str(path)])
    _, err = capsys.readouterr()
    assert status == 2
    assert err.count("\n") == 1
    assert_no_raw_control(err)
    assert "board\\x1b]0;owned\\x07.toml: no such file" in err


def test_a_name_of_megabytes_is_shortened_in_its_one_line_error(tmp_path, capsys):
    name = "a" * (4 * 2**20 - 200)
    path = tmp_path / "long.toml"
    path.write_text(f'[sources.{name}]\nkind = "crystal"\nchoose = "12 MHz"\n', "utf-8")
    status = main(["check", str(path)])
    _, err = capsys.readouterr()
    assert status == 2
    assert err.count("\n") == 1 and len(err) < 500
    assert f'{path}: sources."aaaa' in err and "characters)" in err
