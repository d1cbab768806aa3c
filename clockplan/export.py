"""Plans as plain data: the JSON contract that outside programs can recompute from.

Exact values are strings: an integer ("48000000") or a ratio ("8400000/73").
Figures in ppm and shares are floats, for reading only.
"""

from __future__ import annotations

from dataclasses import asdict
from fractions import Fraction
from typing import Any

from clockplan.compare import Change, Side
from clockplan.evaluate import RateCheck
from clockplan.peripherals.base import CeilingRate, Requirement
from clockplan.quantities import exact_string
from clockplan.result import Explanation, RankedPlan, SearchResult

__all__ = [
    "result_to_data",
    "plan_to_data",
    "check_to_data",
    "explanation_to_data",
    "changes_to_data",
]


def result_to_data(result: SearchResult) -> dict[str, Any]:
    """The whole search result in the JSON contract."""
    return {
        "scenario": result.scenario.title,
        "file": result.scenario.file,
        "status": result.status.value,
        "proved": result.proved,
        "time_limited": result.time_limited,
        "ranks_exhausted": result.exhausted,
        "elapsed_s": round(result.elapsed, 3),
        "ranking_order": list(result.order),
        "error_precision_digits": dict(result.precisions or {}),
        "bounded_errors": sorted(result.bounded_errors),
        "rounded_limits": sorted(result.rounded_limits),
        "plans": [plan_to_data(result, ranked) for ranked in result.plans],
        "explanation": explanation_to_data(result.explanation),
    }


def explanation_to_data(explanation: Explanation | None) -> dict[str, Any] | None:
    """Why no plan fits, as data (None when there is nothing to explain)."""
    if explanation is None:
        return None
    return {
        "conflict": list(explanation.conflict),
        "conflict_is_minimal": explanation.minimal,
        "time_limited": explanation.time_limited,
        "beyond_sources": list(explanation.beyond_sources),
        "relaxations": [
            {"limit": r.limit, "advice": r.advice, "proved": r.proved}
            for r in explanation.relaxations
        ],
    }


def plan_to_data(result: SearchResult, ranked: RankedPlan) -> dict[str, Any]:
    """One ranked plan: oscillators, settings, every clock, every rate."""
    evaluation = ranked.evaluation
    scenario = result.scenario
    peripherals: dict[str, list[dict[str, Any]]] = {}
    for check in evaluation.checks:
        peripherals.setdefault(check.requirement.peripheral, []).append(check_to_data(check))
    worst = evaluation.worst
    return {
        "rank": ranked.rank,
        "status": ranked.status.value,
        "stages": [{"name": stage.name, "proved": stage.proved} for stage in ranked.stages],
        "choice": {name: exact_string(hz) for name, hz in ranked.choice.items()},
        "sources": {
            name: {
                "hz": exact_string(frequency),
                "kind": scenario.source(name).kind,
                "budget_ppm": _ppm(scenario.source(name).budget),
                "budget_rss_ppm": round(scenario.source(name).budget_rss * 1e6, 6),
                "budget_terms_ppm": {
                    key: _ppm(value) for key, value in scenario.source(name).terms.items()
                },
            }
            for name, frequency in ranked.plan.sources.items()
        },
        "settings": dict(ranked.plan.settings),
        "clocks": {name: exact_string(value) for name, value in evaluation.clocks.items()},
        "plls": {
            name: {"pfd_hz": exact_string(pfd), "vco_hz": exact_string(evaluation.clocks[name])}
            for name, pfd in evaluation.detectors.items()
        },
        "peripherals": peripherals,
        "cost": _cost(result, ranked),
        "worst_share": float(evaluation.worst_share),
        "worst_peripheral": worst.requirement.peripheral if worst else None,
        "meets_every_allowance": evaluation.feasible,
        "violations": list(evaluation.violations),
    }


def _cost(result: SearchResult, ranked: RankedPlan) -> float | None:
    """Total cost of the sources that feed some peripheral, when the scenario gives costs."""
    scenario = result.scenario
    if all(source.cost is None for source in scenario.sources):
        return None
    used = {ranked.evaluation.roots[p.clock] for p in scenario.peripherals}
    return float(sum((scenario.source(name).cost or 0 for name in used), Fraction(0)))


def check_to_data(check: RateCheck) -> dict[str, Any]:
    """One required rate: target, achieved, errors and allowance."""
    requirement = check.requirement
    return {
        "label": requirement.label,
        "setting": requirement.setting,
        "divisor": check.divisor,
        "input_hz": exact_string(check.input_clock),
        "target_hz": exact_string(requirement.nominal),
        "achieved_hz": exact_string(check.achieved),
        "error_ppm": _ppm(check.error),
        "source": check.source,
        "source_budget_ppm": _ppm(check.source_budget),
        "worst_case_ppm": _ppm(check.worst_case),
        "worst_case_rss_ppm": round(check.worst_case_rss * 1e6, 6),
        "allowance_ppm": None if check.allowance is None else _ppm(check.allowance),
        "option": check.option.label or None,
        "option_settings": dict(check.option.settings),
        "ceiling": isinstance(requirement, CeilingRate),
        "floor_hz": _floor(requirement),
        "allowance_basis": requirement.allowance_basis,
        "margin_ppm": _ppm(check.margin),
        "unit": requirement.unit,
        "share": round(float(check.share), 9),
        "passes": check.passes,
    }


def _floor(requirement: Requirement) -> str | None:
    """The slowest a ceiling rate may be, exact; None without one (or for a tolerance)."""
    match requirement:
        case CeilingRate(floor=Fraction() as floor):
            return exact_string(floor)
        case _:
            return None


def _ppm(value: Fraction) -> float:
    return round(float(value) * 1e6, 6)


def changes_to_data(a: Side, b: Side, changes: tuple[Change, ...]) -> dict[str, Any]:
    """The plans compared and what differs between them, as ``clockplan diff --json`` prints."""
    return {
        "a": _side_to_data(a),
        "b": _side_to_data(b),
        "changes": [
            {key: value for key, value in asdict(change).items() if not key.endswith("_text")}
            for change in changes
        ],
    }


def _side_to_data(side: Side) -> dict[str, object]:
    return {
        "scenario": side.scenario.title,
        "file": side.scenario.file,
        "rank": side.ranked.rank,
        "status": side.ranked.status.value,
        "closest": side.closest,
        "meets_every_allowance": side.ranked.evaluation.feasible,
    }
