"""Generated boards of growing size and the search's time on each (``bench --scaling``).

One dimension is varied at a time from a base board (4 peripherals, 1 integer PLL, 40
oscillator candidates): peripherals, PLLs, fraction bits, candidates.
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from dataclasses import dataclass

from benchmarks.enumerator import raw_combinations
from clockplan.errors import ClockplanError
from clockplan.scenario import Scenario, parse_scenario
from clockplan.solve import search

__all__ = [
    "ScalingPoint",
    "ScalingRow",
    "scaling_scenario",
    "scaling_variants",
    "run_scaling",
    "dimension_value",
]

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
            f"[dividers.input_clock{index}]",
            f'from = "pll{index % point.plls}"\ndivide = "1..32"',
            f"[peripherals.device{index}]",
            kind,
            f'from = "input_clock{index}"',
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


def run_scaling(*, runs: int, report: Callable[[str], None] | None = None) -> list[ScalingRow]:
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
    results = []
    try:
        for _ in range(runs):
            started = time.perf_counter()
            results.append(search(scenario, top=1))
            seconds.append(time.perf_counter() - started)
    except ClockplanError as error:
        return ScalingRow(
            dimension, point, raw_combinations(scenario), (), f"refused: {error}", None
        )
    result = results[-1]
    worst = result.plans[0].worst_steps if result.plans else None
    # "optimal" alone only when every run proved everything it set out to do.
    cut = sum(not run.proved for run in results)
    status = str(result.status) if not cut else f"time limit hit in {cut} of {runs} runs"
    return ScalingRow(dimension, point, raw_combinations(scenario), tuple(seconds), status, worst)


def dimension_value(dimension: str, point: ScalingPoint) -> int:
    """The value of the varied dimension of a scaling point."""
    return {
        "peripherals": point.peripherals,
        "PLLs": point.plls,
        "fraction bits": point.fraction_bits,
        "candidates": point.candidates,
    }[dimension]
