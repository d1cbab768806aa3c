"""The benchmark harness: solve times, whole-process times, memory and the enumerator's yardstick.

Speed targets live here, never in unit tests. Each case is a scenario file under the
repository's ``scenarios/bench/``. For each one the harness measures the median time of
``search(scenario, top=1)``, the median whole-process time of ``clockplan plan FILE --top 1``,
the peak memory of a search in a child process, the size of the raw search space, and runs
the brute-force enumerator (:mod:`clockplan.brute`) with a time cap to compare its optimum
and its time with the solver's. ``scaling`` measures solve time against the size of a
generated board (peripherals, PLLs, fraction bits, oscillator candidates).
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

from clockplan.brute import Enumeration, enumerate_plans, exact_key, raw_combinations
from clockplan.errors import ClockplanError, InputError
from clockplan.scenario import Scenario, load_scenario, parse_scenario
from clockplan.solve import SearchResult, Status, search

__all__ = [
    "Machine",
    "CaseResult",
    "ScalingRow",
    "machine",
    "bench_directory",
    "case_files",
    "run_case",
    "compare_optima",
    "scaling_scenario",
    "scaling_variants",
    "dimension_value",
    "ScalingPoint",
    "run_scaling",
    "TIER_ORDER",
    "MIN_RUNS",
]

TIER_ORDER = ("small", "medium", "hard")
"""The named tiers, shown first and in this order; other case files follow by name."""
MIN_RUNS = 3
"""Fewest timed runs whose median is reported."""


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


def bench_directory() -> Path:
    """The repository's ``scenarios/bench/``: beside the package, or above the working folder."""
    package_root = Path(__file__).resolve().parent.parent
    places = [package_root, Path.cwd(), *Path.cwd().parents]
    for place in places:
        folder = place / "scenarios" / "bench"
        if folder.is_dir():
            return folder
    raise InputError(
        "bench",
        "no scenarios/bench/ folder beside the clockplan package or above the working folder; "
        "run it from a clone of the clockplan repository (the benchmark boards are not "
        "installed with the package)",
    )


def case_files(folder: Path) -> dict[str, Path]:
    """Every case in ``folder`` by name: the tiers first (small, medium, hard), then by name."""
    files = {path.stem: path for path in sorted(folder.glob("*.toml"))}
    tiers = [name for name in TIER_ORDER if name in files]
    return {name: files[name] for name in tiers + [n for n in files if n not in tiers]}


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
    runs: int = MIN_RUNS,
    cap: float = 20.0,
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
    enumeration = enumerate_plans(scenario, first.precisions, cap=cap)
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
        recomputed = exact_key(first.plans[0].evaluation, first.precisions)
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
    """Seconds of ``python -m clockplan plan FILE --top 1``, refusing a failed run."""
    command = [sys.executable, "-m", "clockplan", "plan", str(path), "--top", "1"]
    started = time.perf_counter()
    finished = subprocess.run(command, capture_output=True, text=True, check=False)
    seconds = time.perf_counter() - started
    if finished.returncode not in (0, 1):
        problem = (finished.stderr.strip().splitlines() or ["no message"])[-1]
        raise ClockplanError(f"clockplan plan {path} failed: {problem}")
    return seconds


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


# -- scaling ---------------------------------------------------------------------------------

_KINDS = (
    ('kind = "uart"', "baud = [115200]\nfraction_bits = 4"),
    ('kind = "usb-full-speed"', ""),
    ('kind = "clock"', 'rate = "12.288 MHz"\nallowance = "1 %"\ndivide = "1..64"'),
    ('kind = "tick"', 'rate = "1 kHz"\nchain = "1..100000"'),
    ('kind = "uart"', "baud = [9600]"),
    ('kind = "clock"', 'rate = "11.2896 MHz"\nallowance = "1 %"\ndivide = "1..64"'),
    ('kind = "uart"', "baud = [31250]"),
    ('kind = "clock"', 'rate = "2 MHz"\nallowance = "1 %"\ndivide = "1..64"'),
)
"""Peripherals the generated boards cycle through (each on a divider of its own)."""


@dataclass(frozen=True)
class ScalingPoint:
    """The size of one generated board."""

    peripherals: int = 4
    plls: int = 1
    fraction_bits: int = 0
    candidates: int = 40


def scaling_scenario(point: ScalingPoint) -> str:
    """TOML of a generated board of the given size (our own invention, made to stay feasible).

    One crystal with ``candidates`` frequencies from 8 MHz in 1 kHz steps, ``plls`` PLLs
    fed by it, and ``peripherals`` peripherals cycling through a fixed list of kinds, each
    on a divider of its own from PLL number (index mod plls).
    """
    top = 8_000 + point.candidates - 1
    lines = [
        f'title = "Scaling: {point.peripherals} peripherals, {point.plls} PLLs, '
        f'{point.fraction_bits} fraction bits, {point.candidates} candidates"',
        "[sources.main]",
        'kind = "crystal"',
        f'choose = {{ from = "8 MHz", to = "{top} kHz", step = "1 kHz" }}',
        'tolerance = "10 ppm"\nstability = "10 ppm"\naging = "5 ppm"',
    ]
    for index in range(point.plls):
        lines += [
            f"[plls.pll{index}]",
            'from = "main"\nreference_divider = "1..16"\npfd = "1 MHz .. 4 MHz"',
            f'multiplier = "24..200"\nfraction_bits = {point.fraction_bits}',
            'vco = "96 MHz .. 400 MHz"',
        ]
    for index in range(point.peripherals):
        kind, keys = _KINDS[index % len(_KINDS)]
        lines += [
            f"[dividers.kernel{index}]",
            f'from = "pll{index % point.plls}"\ndivide = "1..32"',
            f"[peripherals.device{index}]",
            kind,
            f'from = "kernel{index}"',
        ]
        if keys:
            lines.append(keys)
    return "\n".join(lines) + "\n"


def scaling_variants() -> list[tuple[str, ScalingPoint]]:
    """One dimension at a time from the base point (4 peripherals, 1 PLL, integer-N, 40)."""
    variants = [("peripherals", ScalingPoint(peripherals=n)) for n in (2, 4, 8, 16)]
    variants += [("PLLs", ScalingPoint(plls=n)) for n in (1, 2, 3)]
    variants += [("fraction bits", ScalingPoint(fraction_bits=n)) for n in (0, 8, 16, 24)]
    variants += [("candidates", ScalingPoint(candidates=n)) for n in (1, 100, 1000, 10_000)]
    return variants


@dataclass(frozen=True)
class ScalingRow:
    """Solve time of one generated board."""

    dimension: str
    point: ScalingPoint
    raw_combinations: int
    solve_seconds: tuple[float, ...]
    status: str
    """The solver's status, or why the board could not be searched."""
    worst_steps: int | None

    @property
    def solve_median(self) -> float | None:
        """Median seconds of the search (None when it could not run)."""
        return statistics.median(self.solve_seconds) if self.solve_seconds else None


def run_scaling(
    *, runs: int = MIN_RUNS, report: Callable[[str], None] | None = None
) -> list[ScalingRow]:
    """Solve every scaling variant ``runs`` times."""
    rows = []
    for dimension, point in scaling_variants():
        if report:
            report(f"scaling: {dimension} {dimension_value(dimension, point)}")
        scenario = parse_scenario(scaling_scenario(point), "scaling.toml")
        rows.append(_scale_one(dimension, point, scenario, runs))
    return rows


def _scale_one(dimension: str, point: ScalingPoint, scenario: Scenario, runs: int) -> ScalingRow:
    seconds: list[float] = []
    try:
        for _ in range(runs):
            started = time.perf_counter()
            result = search(scenario, top=1)
            seconds.append(time.perf_counter() - started)
    except ClockplanError as error:
        return ScalingRow(
            dimension, point, raw_combinations(scenario), (), f"refused: {error}", None
        )
    worst = result.plans[0].worst_steps if result.plans else None
    return ScalingRow(
        dimension, point, raw_combinations(scenario), tuple(seconds), str(result.status), worst
    )


def dimension_value(dimension: str, point: ScalingPoint) -> int:
    """The value of the varied dimension of a scaling point."""
    return {
        "peripherals": point.peripherals,
        "PLLs": point.plls,
        "fraction bits": point.fraction_bits,
        "candidates": point.candidates,
    }[dimension]
