"""The time limit bounds the whole search, and a cut is reported by name, never hidden.

No test here depends on how fast the machine is: the clock is replaced by one that jumps,
or the limit is far too short for any machine to finish the work asked for.
"""

import subprocess
import sys
from itertools import count

from clockplan.result import Status
from clockplan.solve import search
from tests.helpers import board, board_text

SEARCH = sys.modules["clockplan.solve.search"]


def test_a_stage_cut_by_the_time_limit_is_named_and_the_plan_marked_unproved(monkeypatch):
    # A clock that moves an hour between readings: the first solve runs, every later one
    # finds its time already spent. Nothing depends on the machine's speed.
    ticks = count()
    monkeypatch.setattr(SEARCH.time, "monotonic", lambda: 3600.0 * next(ticks))
    result = search(board("hard"), top=5, time_limit=7200)
    assert result.time_limited
    assert result.status is not Status.OPTIMAL
    assert not result.proved
    for ranked in result.plans:
        assert ranked.unproved, "a plan cut by the limit says which stages are unproved"
        assert ranked.evaluation.violations == ()


def test_the_command_line_exits_3_and_names_the_cut(tmp_path):
    # Two hundred ranks of this board in a tenth of a second: no machine finishes that.
    path = tmp_path / "hard.toml"
    path.write_text(board_text("hard"))
    completed = subprocess.run(
        [
            sys.executable,
            "-m",
            "clockplan",
            "plan",
            str(path),
            "--top",
            "200",
            "--time-limit",
            "0.1",
        ],
        capture_output=True,
        text=True,
        check=False,
    )
    assert completed.returncode == 3, completed.stderr
    assert "Traceback" not in completed.stderr
    assert "not proved" in completed.stdout or "unknown" in completed.stdout
