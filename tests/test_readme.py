"""The README's shown outputs match what the commands print today (timings aside)."""

import re
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "scripts"))
from refresh_readme import README, blocks, command_output  # noqa: E402

TIMING = re.compile(r"\d+\.\d+ s\b")


def _steady(text: str) -> str:
    return TIMING.sub("… s", "\n".join(line.rstrip() for line in text.splitlines()))


BLOCKS = blocks(README.read_text(encoding="utf-8"))


@pytest.mark.parametrize(("command", "shown"), BLOCKS, ids=[command for command, _ in BLOCKS])
def test_readme_output_is_current(command, shown):
    # If this fails, run: python scripts/refresh_readme.py
    assert _steady(command_output(command)) == _steady(shown)
