"""Lines broken only between phrases: packing, indents, measuring, an overlong phrase."""

from __future__ import annotations

import io

import pytest
from rich.console import Console
from rich.measure import Measurement
from rich.table import Table
from rich.text import Text

from clockplan.phrases import Phrases, listed

FIGURES = Phrases(
    (
        (Text("error +0.6441 %,"), Text(" worst 0.6507 % of 2.2364 %"), Text(" (29.09 % used)")),
        (Text("  ranked by: worst share,"), Text(" sum of shares")),
    )
)


def _printed(renderable: object, width: int) -> str:
    console = Console(file=io.StringIO(), width=width, color_system=None)
    console.print(renderable)
    return console.file.getvalue()


@pytest.mark.parametrize(
    ("width", "expected"),
    [
        (
            80,
            "error +0.6441 %, worst 0.6507 % of 2.2364 % (29.09 % used)\n"
            "  ranked by: worst share, sum of shares\n",
        ),
        (
            40,
            "error +0.6441 %,\n"
            "worst 0.6507 % of 2.2364 %\n"
            "(29.09 % used)\n"
            "  ranked by: worst share, sum of shares\n",
        ),
        (
            30,
            "error +0.6441 %,\n"
            "worst 0.6507 % of 2.2364 %\n"
            "(29.09 % used)\n"
            "  ranked by: worst share,\n"
            "  sum of shares\n",
        ),
    ],
)
def test_a_line_breaks_only_between_phrases(width, expected):
    assert _printed(FIGURES, width) == expected


def test_a_hanging_indent_moves_the_following_lines():
    phrases = Phrases(((Text("A: Desk clock"), Text(" (boards/desk_clock.toml)")),), hanging=3)
    assert _printed(phrases, 30) == "A: Desk clock\n   (boards/desk_clock.toml)\n"


def test_a_phrase_wider_than_the_line_is_wrapped_word_by_word():
    phrases = Phrases(((Text("short"), Text(" a phrase far too wide for this")),))
    assert _printed(phrases, 12) == "short\na phrase far\ntoo wide for\nthis\n"


def test_the_measure_is_the_widest_phrase_to_the_whole_paragraph():
    measured = Measurement.get(Console(width=200), Console(width=200).options, FIGURES)
    widest = "error +0.6441 %, worst 0.6507 % of 2.2364 % (29.09 % used)"
    assert measured == Measurement(len("worst 0.6507 % of 2.2364 %"), len(widest))


def test_in_a_table_the_column_narrows_to_whole_phrases():
    table = Table("figures", "note")
    table.add_row(FIGURES, "x")
    lines = _printed(table, 46).splitlines()
    assert "│ worst 0.6507 % of 2.2364 %" in "\n".join(lines)
    assert all(len(line) <= 46 for line in lines)


def test_listed_keeps_each_comma_with_its_item():
    assert [text.plain for text in listed(["a = 1", "b = 2", "c"])] == ["a = 1,", " b = 2,", " c"]
    assert [text.plain for text in listed(["only"], gap="  ")] == ["only"]
