"""Ctrl-C before the command line has even been imported: one line and exit 130.

The child process is made to stop at a known point, inside the import of
``clockplan.cli``, and only then interrupted, so the test does not depend on how fast
imports run.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap

import pytest

from clockplan import entry
from clockplan.exits import Exit

BLOCK_IN_THE_IMPORT = textwrap.dedent(
    """
    import signal, sys, time

    # Ctrl-C at a terminal reaches a process whose SIGINT is at its default; a test run
    # started in the background hands its children SIGINT ignored, so restore the default.
    signal.signal(signal.SIGINT, signal.default_int_handler)

    class Blocker:
        def find_spec(self, name, path=None, target=None):
            if name == "clockplan.cli":
                print("importing", flush=True)
                time.sleep(600)  # interrupted here
            return None

    sys.meta_path.insert(0, Blocker())
    sys.argv = ["clockplan", "plan"]
    from clockplan.entry import main_entry
    main_entry()
    """
)


@pytest.mark.skipif(sys.platform == "win32", reason="SIGINT to a child is POSIX")
def test_ctrl_c_during_the_imports_exits_130_with_one_line():
    child = subprocess.Popen(
        [sys.executable, "-c", BLOCK_IN_THE_IMPORT],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        stdin=subprocess.DEVNULL,
        text=True,
    )
    try:
        assert child.stdout is not None
        assert child.stdout.readline() == "importing\n"  # blocked inside the import now
        os.kill(child.pid, signal.SIGINT)
        _, err = child.communicate(timeout=120)
    finally:
        child.kill()
    assert child.returncode == Exit.INTERRUPTED
    assert err == "clockplan: interrupted\n"


def test_the_entry_point_turns_an_interrupt_in_any_import_into_exit_130(monkeypatch, capsys):
    class Interrupt:
        def find_spec(self, name, path=None, target=None):
            if name == "clockplan.cli":
                raise KeyboardInterrupt
            return None

    monkeypatch.delitem(sys.modules, "clockplan.cli", raising=False)
    monkeypatch.setattr(sys, "meta_path", [Interrupt(), *sys.meta_path])
    with pytest.raises(SystemExit) as stop:
        entry.main_entry()
    assert stop.value.code == Exit.INTERRUPTED
    assert capsys.readouterr().err == "clockplan: interrupted\n"


def test_the_entry_point_passes_the_exit_status_on(monkeypatch, capsys):
    monkeypatch.setattr(sys, "argv", ["clockplan", "check", ""])
    with pytest.raises(SystemExit) as stop:
        entry.main_entry()
    assert stop.value.code == 2
    assert capsys.readouterr().err.count("\n") == 1
