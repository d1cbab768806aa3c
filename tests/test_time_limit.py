"""The search honours its time limit and says when the limit cut it short."""

import subprocess
import sys
import time

from clockplan.scenario import parse_scenario
from clockplan.solve import search
from tests.test_interrupt import HARD

MARGIN = 3.0  # seconds for model building, evaluation and a busy machine


def test_search_stops_within_its_time_limit():
    scenario = parse_scenario(HARD, "hard.toml")
    started = time.monotonic()
    result = search(scenario, top=200, time_limit=2.0)
    assert time.monotonic() - started < 2.0 + MARGIN
    assert result.time_limited
    assert result.plans, "the plans proved or found before the limit are kept"


def test_command_line_time_limit_is_honoured_and_reported(tmp_path):
    path = tmp_path / "hard.toml"
    path.write_text(HARD)
    started = time.monotonic()
    completed = subprocess.run(
        [sys.executable, "-m", "clockplan", "plan", str(path), "--top", "200", "--time-limit", "2"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert time.monotonic() - started < 2.0 + MARGIN + 2.0  # plus the interpreter's start
    assert completed.returncode == 0
    assert "the time limit cut later ranks short" in completed.stdout
