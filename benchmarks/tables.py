"""The benchmark's tables as rich renderables, and the number formats they share."""

from __future__ import annotations

import math
import statistics

from rich import box
from rich.table import Table

from benchmarks.enumerator import SHARE_STEPS
from benchmarks.measure import CaseResult, Machine
from benchmarks.scaling import ScalingRow, dimension_value

__all__ = ["header", "solver_table", "enumerator_table", "scaling_table"]


def header(about: Machine, *, runs: int, cap: float, floor: tuple[float, ...]) -> str:
    """The lines above the tables: the machine, how the figures were taken, and the floor."""
    return (
        f"clockplan bench: {about.cores} cores, Python {about.python}, OR-Tools {about.ortools}, "
        f"numpy {about.numpy}, {about.system}\n"
        f"search and process: medians of {runs} runs; memory: peak of a search in a child "
        f"process; enumerator capped at {cap:g} s per case (~: projected past the cap)\n"
        f"floor: a process that only imports CP-SAT, {_seconds(statistics.median(floor))} "
        f"(median of {len(floor)}); × floor = whole process / floor"
    )


def solver_table(results: list[CaseResult], floor: tuple[float, ...]) -> Table:
    """The search's row per case, the whole process also as a multiple of the floor."""
    floor_median = statistics.median(floor)
    table = Table(title="Search", box=box.SIMPLE_HEAD, title_justify="left")
    table.add_column("case")
    table.add_column("status")
    table.add_column("optimum (key)", justify="right")
    table.add_column("search", justify="right")
    table.add_column("process", justify="right")
    table.add_column("× floor", justify="right")
    table.add_column("memory", justify="right")
    table.add_column("raw space", justify="right")
    for result in results:
        table.add_row(
            result.name,
            str(result.status),
            _optimum(result.worst_steps),
            _seconds(result.solve_median),
            _seconds(result.process_median),
            f"{result.process_median / floor_median:.1f}×",
            f"{result.peak_rss_bytes / 2**20:.0f} MiB",
            _count(result.raw_combinations),
        )
    return table


def enumerator_table(results: list[CaseResult]) -> Table:
    """The enumerator's row per case, and whether its optimum agrees."""
    table = Table(title="Brute-force enumerator", box=box.SIMPLE_HEAD, title_justify="left")
    table.add_column("case")
    table.add_column("time", justify="right")
    table.add_column("checked/tree", justify="right")
    table.add_column("rate", justify="right")
    table.add_column("optimum", justify="right")
    table.add_column("speed-up", justify="right")
    table.add_column("optima")
    for result in results:
        enumeration = result.enumeration
        if enumeration.finished:
            time_text = _seconds(enumeration.elapsed)
            found = _optimum(enumeration.best_key) if enumeration.best_key is not None else "none"
            faster = f"{result.speedup:,.0f}×" if result.speedup >= 10 else f"{result.speedup:.2g}×"
        else:
            time_text = f"~{_seconds(enumeration.projected)}"
            found = (
                f"so far {_optimum(enumeration.best_key)}"
                if enumeration.best_key is not None
                else "none yet"
            )
            faster = f"~{_ratio(result.speedup)}×"
        table.add_row(
            result.name,
            time_text,
            f"{_count(enumeration.checked)}/{_count(enumeration.total)}",
            f"{_count(round(enumeration.rate))}/s",
            found,
            faster,
            _verdict(result),
        )
    return table


def _verdict(result: CaseResult) -> str:
    if result.mismatch:
        return "MISMATCH"
    enumeration = result.enumeration
    if enumeration.finished and not enumeration.capped:
        return "equal"
    if enumeration.capped:
        return "not proved (re-check cap)"
    return "not compared"


def scaling_table(rows: list[ScalingRow]) -> Table:
    """The search on each generated board."""
    table = Table(
        title="Scaling (generated boards; one dimension varied from 4 peripherals, 1 PLL, "
        "integer-N, 40 candidates)",
        box=box.SIMPLE_HEAD,
        title_justify="left",
    )
    table.add_column("varied")
    table.add_column("value", justify="right")
    table.add_column("raw space", justify="right")
    table.add_column("search", justify="right")
    table.add_column("status")
    table.add_column("optimum (key)", justify="right")
    for row in rows:
        median = row.solve_median
        table.add_row(
            row.dimension,
            str(dimension_value(row.dimension, row.point)),
            _count(row.raw_combinations),
            _seconds(median) if median is not None else "-",
            row.status,
            _optimum(row.worst_steps),
        )
    return table


def _optimum(steps: int | None) -> str:
    if steps is None:
        return "-"
    return f"{100 * steps / SHARE_STEPS:.2f} % ({steps})"


_LONG = ((365.25 * 86400, "years"), (86400, "days"), (3600, "hours"))


def _seconds(value: float) -> str:
    if math.isinf(value):
        return "∞"
    if value < 1:
        return f"{value * 1000:.0f} ms"
    if value < 1000:
        return f"{value:.2f} s"
    unit, name = next(((unit, name) for unit, name in _LONG if value >= unit), (1, "s"))
    amount = value / unit
    return f"{amount:.3g} {name}" if amount < 1000 else f"{_count(round(amount))} {name}"


def _ratio(value: float) -> str:
    if math.isinf(value):
        return "∞"
    return f"{value:,.0f}" if value < 1e6 else f"{value:.1e}"


def _count(value: int) -> str:
    """A count, exact below a million, else as mantissa and exponent (it may exceed floats)."""
    if value < 1_000_000:
        return str(value)
    exponent = len(str(value)) - 1
    mantissa = (value + 5 * 10 ** (exponent - 3)) // 10 ** (exponent - 2)  # 3 digits, rounded
    if mantissa >= 1000:
        mantissa, exponent = mantissa // 10, exponent + 1
    return f"{mantissa // 100}.{mantissa % 100:02d}e{exponent}"
