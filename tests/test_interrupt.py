"""Ctrl-C during a search prints the best plan found so far and exits cleanly."""

import signal
import subprocess
import sys
from threading import Event

import pytest

from clockplan.scenario import load_scenario
from clockplan.solve import search
from tests.helpers import board_text


@pytest.fixture
def hard_board(tmp_path):
    path = tmp_path / "hard.toml"
    path.write_text(board_text("hard"))
    return path


def test_interrupt_keeps_the_best_plan_so_far(hard_board, monkeypatch):
    # Ctrl-C reaches the main thread while it waits for CP-SAT: simulate exactly that, once,
    # during the third solve (rank 1 is found by then); a real signal would hit pytest too.
    search_module = sys.modules["clockplan.solve.search"]

    class CtrlCOnce(Event):
        made = 0
        pressed = False

        def __init__(self):
            super().__init__()
            CtrlCOnce.made += 1
            self.third = CtrlCOnce.made == 3

        def wait(self, timeout=None):
            if self.third and not CtrlCOnce.pressed:
                CtrlCOnce.pressed = True
                raise KeyboardInterrupt
            return super().wait(timeout)

    monkeypatch.setattr(search_module, "Event", CtrlCOnce)
    result = search(load_scenario(hard_board), top=50, time_limit=600)
    assert CtrlCOnce.pressed
    assert result.interrupted
    assert len(result.plans) >= 1, "the plans found before Ctrl-C are kept"
    assert result.plans[0].evaluation.feasible
    assert result.plans[-1].unproved, "the plan the interrupt cut says it is not proved"


CHILD = """
import signal, sys, threading
# Ctrl-C at a terminal reaches a process whose SIGINT is at its default; a test run
# started in the background hands its children SIGINT ignored, so restore the default.
signal.signal(signal.SIGINT, signal.default_int_handler)
from ortools.sat.python import cp_model
from clockplan.cli import main

real_solve, real_stop = cp_model.CpSolver.solve, cp_model.CpSolver.stop_search
stopped = threading.Event()
solves = [0]

def solve(self, model, *args, **kwargs):
    solves[0] += 1
    if solves[0] < 3:  # the first stages run for real: a plan exists by then
        return real_solve(self, model, *args, **kwargs)
    print("ready", file=sys.stderr, flush=True)  # now a solve that only Ctrl-C ends
    stopped.wait()
    return cp_model.UNKNOWN

def stop_search(self):
    stopped.set()
    real_stop(self)

cp_model.CpSolver.solve, cp_model.CpSolver.stop_search = solve, stop_search
sys.exit(main(["plan", "--top", "50", "--workers", "1"]))
"""


def test_ctrl_c_on_the_command_line_prints_plans_and_exits_130():
    # The child (the bundled board) blocks in its third solve and says so; only then is
    # Ctrl-C sent, so the test does not depend on how fast the machine imports or solves.
    process = subprocess.Popen(
        [sys.executable, "-c", CHILD],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    assert process.stderr is not None
    for line in process.stderr:
        if line.strip() == "ready":
            break
    process.send_signal(signal.SIGINT)
    out, err = process.communicate(timeout=120)
    assert process.returncode == 130, err
    assert "Traceback" not in err
    assert "stopped by Ctrl-C" in out, (out, err)
    assert "ranked clock plans" in out
