"""The benchmark's results as one JSON document (``clockplan bench --json``)."""

from __future__ import annotations

import math
import statistics
from typing import Any

from benchmarks.enumerator import SHARE_STEPS
from benchmarks.measure import CaseResult, Machine
from benchmarks.scaling import ScalingRow

__all__ = ["as_data"]


def as_data(
    about: Machine,
    *,
    runs: int,
    cap: float,
    floor: tuple[float, ...],
    results: list[CaseResult],
    scaling: list[ScalingRow],
) -> dict[str, Any]:
    """The whole run as one JSON document: the machine, the options, every case and board."""
    return {
        "machine": {
            "cores": about.cores,
            "python": about.python,
            "ortools": about.ortools,
            "numpy": about.numpy,
            "system": about.system,
        },
        "runs": runs,
        "enumerator_cap_s": cap,
        "floor_s": list(floor),
        "floor_median_s": statistics.median(floor),
        "cases": [_case_data(result, statistics.median(floor)) for result in results],
        "scaling": [_scaling_data(row) for row in scaling],
    }


def _case_data(result: CaseResult, floor: float) -> dict[str, Any]:
    enumeration = result.enumeration
    return {
        "name": result.name,
        "file": result.file,
        "status": str(result.status),
        "optimum_key": result.worst_steps,
        "optimum_share": None if result.worst_steps is None else result.worst_steps / SHARE_STEPS,
        "solve_s": list(result.solve_seconds),
        "solve_median_s": result.solve_median,
        "process_s": list(result.process_seconds),
        "process_median_s": result.process_median,
        "process_over_floor": result.process_median / floor,
        "peak_rss_bytes": result.peak_rss_bytes,
        "raw_combinations": str(result.raw_combinations),
        "enumerator": {
            "finished": enumeration.finished,
            "best_key": enumeration.best_key,
            "checked": str(enumeration.checked),
            "total": str(enumeration.total),
            "elapsed_s": enumeration.elapsed,
            "projected_s": None if math.isinf(enumeration.projected) else enumeration.projected,
            "rate_per_s": enumeration.rate,
            "rechecked": enumeration.rechecked,
            "recheck_capped": enumeration.capped,
        },
        "speedup": None if math.isinf(result.speedup) else result.speedup,
        "mismatch": result.mismatch,
    }


def _scaling_data(row: ScalingRow) -> dict[str, Any]:
    return {
        "varied": row.dimension,
        "peripherals": row.point.peripherals,
        "plls": row.point.plls,
        "fraction_bits": row.point.fraction_bits,
        "candidates": row.point.candidates,
        "raw_combinations": str(row.raw_combinations),
        "solve_s": list(row.solve_seconds),
        "solve_median_s": row.solve_median,
        "status": row.status,
        "optimum_key": row.worst_steps,
    }
