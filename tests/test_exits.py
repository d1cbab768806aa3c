"""Exit statuses: one enum, light enough for the entry point to hold before its guard."""

from __future__ import annotations

import json
import subprocess
import sys

from clockplan.exits import Exit


def test_the_exit_enum_imports_nothing_else_of_clockplan():
    # the entry point imports it before its Ctrl-C guard: it must stay that light
    code = (
        "import json, sys; import clockplan.exits; "
        "print(json.dumps(sorted(m for m in sys.modules if m.startswith('clockplan'))))"
    )
    completed = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert json.loads(completed.stdout) == ["clockplan", "clockplan.exits"]


def test_every_exit_status_is_distinct_and_documented():
    # README, "How plans are ranked": 0 done, 1 no plan, 2 bad input, 3 not proved,
    # 4 internal error, 130 Ctrl-C.
    assert [int(status) for status in Exit] == [0, 1, 2, 3, 4, 130]
    assert all(status.__doc__ for status in Exit)
