"""Exit statuses: one enum, and the entry point's import-free copy agrees with it."""

from __future__ import annotations

from clockplan import entry
from clockplan.exits import Exit


def test_the_entry_point_exits_130_on_ctrl_c_as_the_enum_says():
    assert entry.EXIT_INTERRUPTED == Exit.INTERRUPTED == 130


def test_every_exit_status_is_distinct_and_documented():
    # README, "How plans are ranked": 0 done, 1 no plan, 2 bad input, 3 not proved,
    # 4 internal error, 130 Ctrl-C.
    assert [int(status) for status in Exit] == [0, 1, 2, 3, 4, 130]
    assert all(status.__doc__ for status in Exit)
