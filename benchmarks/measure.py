"""The measurements of one benchmark case: solve times, whole-process times, memory, enumeration.

Speed targets live here, never in unit tests. For each case (a board in the repository's
``scenarios/bench/``) the harness measures the median time of ``search(scenario, top=1)``,
the median whole-process time of ``clockplan plan FILE --top 1``, the peak memory of a
search in a child process, the size of the raw search space, and runs the brute-force
enumerator (:mod:`benchmarks.enumerator`) with a time cap to compare its optimum and its
time with the solver's.
"""

from __future__ import annotations

import multiprocessing
import os
import platform
import resource
import statistics
import subprocess
import sys
import time
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

from benchmarks.enumerator import Enumeration, enumerate_plans, exact_key, raw_combinations
from clockplan.errors import ClockplanError
from clockplan.scenario import load_scenario
from clockplan.solve import SearchResult, Status, search

__all__ = [
    "Machine",
    "CaseResult",
    "machine",
    "import_floor",
    "run_case",
    "compare_optima",
    "peak_search_memory",
]

FLOOR_CODE = "import ortools.sat.python.cp_model"
"""What every run of the solver pays before any work of ours: importing CP-SAT's module."""


@dataclass(frozen=True)
class Machine:
    """What the benchmark ran on."""

    cores: int
    python: str
    ortools: str
    numpy: str
    system: str


def machine() -> Machine:
    """The cores, Python, OR-Tools and numpy versions and the operating system of this run."""
    return Machine(
        os.cpu_count() or 1,
        platform.python_version(),
        metadata.version("ortools"),
        metadata.version("numpy"),
        f"{platform.system()} {platform.machine()}",
    )


def import_floor(runs: int) -> tuple[float, ...]:
    """Seconds of each of ``runs`` fresh processes that only import CP-SAT: the floor that
    a whole ``clockplan plan`` is compared with, measured in the same run as the cases."""
    return tuple(_time_process([sys.executable, "-c", FLOOR_CODE]) for _ in range(runs))


def _time_process(command: list[str], *, succeeded: tuple[int, ...] = (0,)) -> float:
    """Seconds of one process, refusing a run whose exit status is not in ``succeeded``."""
    started = time.perf_counter()
    finished = subprocess.run(command, capture_output=True, text=True, check=False)
    seconds = time.perf_counter() - started
    if finished.returncode not in succeeded:
        problem = (finished.stderr.strip().splitlines() or ["no message"])[-1]
        raise ClockplanError(f"{' '.join(command[2:])} failed: {problem}")  # past python -m/-c
    return seconds


# -- one case --------------------------------------------------------------------------------


@dataclass(frozen=True)
class CaseResult:
    """Every figure of one benchmark case."""

    name: str
    file: str
    status: Status
    worst_steps: int | None
    """The solver's optimum (worst share in 1/10 000 steps); None without a plan."""
    solve_seconds: tuple[float, ...]
    """Each timed run of ``search(scenario, top=1)``."""
    process_seconds: tuple[float, ...]
    """Each timed run of ``clockplan plan FILE --top 1`` as a separate process."""
    peak_rss_bytes: int
    """Peak resident memory of a child process that loads the scenario and searches it."""
    raw_combinations: int
    enumeration: Enumeration
    mismatch: str | None
    """Why the optima disagree, when they do (None: they agree or cannot be compared)."""

    @property
    def solve_median(self) -> float:
        """Median seconds of the search."""
        return statistics.median(self.solve_seconds)

    @property
    def process_median(self) -> float:
        """Median seconds of the whole ``clockplan plan`` process."""
        return statistics.median(self.process_seconds)

    @property
    def enumerator_seconds(self) -> float:
        """The enumerator's time: measured when it finished, projected when the cap stopped it."""
        return self.enumeration.projected

    @property
    def speedup(self) -> float:
        """How many times faster the search is than enumeration (projected past the cap)."""
        return self.enumerator_seconds / max(self.solve_median, 1e-9)


def run_case(
    name: str,
    path: Path,
    *,
    runs: int,
    cap: float,
    report: Callable[[str], None] | None = None,
) -> CaseResult:
    """Measure one case: ``runs`` searches and processes, memory, and the enumerator."""
    scenario = load_scenario(path)
    tell = report or (lambda _: None)
    tell(f"{name}: searching ({runs} runs)")
    results, solve_seconds = [], []
    for _ in range(runs):
        started = time.perf_counter()
        results.append(search(scenario, top=1))
        solve_seconds.append(time.perf_counter() - started)
    first = results[0]
    tell(f"{name}: clockplan plan as a process ({runs} runs)")
    process_seconds = tuple(_time_plan_process(path) for _ in range(runs))
    tell(f"{name}: peak memory of a search in a child process")
    peak = peak_search_memory(path)
    tell(f"{name}: enumerating (cap {cap:g} s)")
    enumeration = enumerate_plans(scenario, cap=cap)
    return CaseResult(
        name,
        str(path),
        first.status,
        first.plans[0].worst_steps if first.plans else None,
        tuple(solve_seconds),
        process_seconds,
        peak,
        raw_combinations(scenario),
        enumeration,
        compare_optima(results, enumeration),
    )


def compare_optima(results: list[SearchResult], enumeration: Enumeration) -> str | None:
    """Why the solver's runs and the enumerator disagree, or None when they agree."""
    first = results[0]
    steps = [result.plans[0].worst_steps if result.plans else None for result in results]
    if len({s for s, r in zip(steps, results, strict=True) if r.status is Status.OPTIMAL}) > 1:
        return f"the solver's proven optima differ between runs: {steps}"
    solver = steps[0]
    if first.plans:
        recomputed = exact_key(first.plans[0].evaluation)
        if recomputed != solver:
            return f"the solver reports key {solver} but its plan recomputes to {recomputed}"
    found = enumeration.best_key
    if found is not None and solver is not None and found < solver:
        if first.status is Status.OPTIMAL:
            return f"the enumerator found key {found}, below the solver's proven {solver}"
        return None  # the solver was stopped by its time limit; the enumerator did better
    if not enumeration.finished or enumeration.capped:
        return None
    if first.status is Status.INFEASIBLE and found is not None:
        return f"the solver proved no plan fits, the enumerator found key {found}"
    if found is None and solver is not None:
        return f"the enumerator found no feasible plan, the solver found key {solver}"
    if first.status is Status.OPTIMAL and found != solver:
        return f"the enumerator's optimum is key {found}, the solver's is {solver}"
    return None


def _time_plan_process(path: Path) -> float:
    """Seconds of ``python -m clockplan plan FILE --top 1``; a board proved to have no plan
    (exit 1) is a measured run too."""
    command = [sys.executable, "-m", "clockplan", "plan", str(path), "--top", "1"]
    return _time_process(command, succeeded=(0, 1))


def peak_search_memory(path: Path) -> int:
    """Peak resident bytes of a fresh (spawned) process that loads ``path`` and searches it."""
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=1, mp_context=context) as pool:
        return pool.submit(_search_in_child, str(path)).result()


def _search_in_child(path: str) -> int:
    """In the child: search, then report the peak resident set (Linux counts KiB, macOS bytes)."""
    search(load_scenario(path), top=1)
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak if sys.platform == "darwin" else peak * 1024
