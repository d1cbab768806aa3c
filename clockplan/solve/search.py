"""Search: solve the model, rank the best plan for each oscillator choice, report honestly.

Rank 1 is the proven best plan overall; rank k is the proven best plan among the
oscillator choices not yet ranked. Each rank is solved in two stages: first the
worst share of an allowance is minimised; then, holding it, the tie-breakers in
order: clocks marked "fastest" as fast as allowed, the smallest sum of every
rate's share, the earlier candidate frequency (catalog or list order), the
smallest sum of settings. Both stages are proved optimal, so the plan does not
depend on how many workers CP-SAT runs, save for exact ties on all of these.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from enum import StrEnum

from ortools.sat.python import cp_model

from clockplan.evaluate import Evaluation, evaluate_plan
from clockplan.plan import Plan
from clockplan.scenario import Scenario
from clockplan.solve.model import SHARE_STEPS, ClockModel, build_model

__all__ = ["Status", "RankedPlan", "SearchResult", "search", "DEFAULT_TIME_LIMIT"]

DEFAULT_TIME_LIMIT = 60.0
"""Seconds the whole search may take unless the caller says otherwise."""
DEFAULT_WORKERS = 8
"""CP-SAT search workers (threads); its portfolio pays even on two cores."""


class Status(StrEnum):
    """What the solver could prove."""

    OPTIMAL = "optimal"
    """Proved: no plan is better."""
    FEASIBLE = "feasible"
    """A plan, but the time limit stopped the proof."""
    INFEASIBLE = "infeasible"
    """Proved: no plan meets every limit and allowance."""
    UNKNOWN = "unknown"
    """The time limit stopped the search before any plan or proof."""


@dataclass(frozen=True)
class RankedPlan:
    """One plan of the ranking with its exact evaluation."""

    rank: int
    plan: Plan
    evaluation: Evaluation
    status: Status
    worst_steps: int
    """The objective as the solver saw it: worst share in steps of 1/SHARE_STEPS."""


@dataclass(frozen=True)
class SearchResult:
    """The ranked plans and what the search could prove about them."""

    scenario: Scenario
    status: Status
    """Status of rank 1 (the answer to "what is the best plan?")."""
    plans: tuple[RankedPlan, ...]
    precision: int
    """Synthesis errors entered the objective rounded up to 10**-precision."""
    elapsed: float
    """Seconds spent searching."""
    time_limited: bool
    """Whether the time limit cut any part of the search short."""


_STATUS = {
    cp_model.OPTIMAL: Status.OPTIMAL,
    cp_model.FEASIBLE: Status.FEASIBLE,
    cp_model.INFEASIBLE: Status.INFEASIBLE,
    cp_model.UNKNOWN: Status.UNKNOWN,
}


def search(
    scenario: Scenario,
    *,
    top: int = 5,
    time_limit: float = DEFAULT_TIME_LIMIT,
    workers: int = DEFAULT_WORKERS,
    progress: Callable[[int, int], None] | None = None,
) -> SearchResult:
    """Rank up to ``top`` plans, each for a different choice of oscillator frequencies."""
    started = time.monotonic()
    deadline = started + time_limit
    handles = build_model(scenario)
    plans: list[RankedPlan] = []
    status = Status.UNKNOWN
    time_limited = False
    for rank in range(1, top + 1):
        if progress:
            progress(rank - 1, top)
        found = _solve_rank(handles, deadline, workers)
        plan, rank_status, steps, limited = found
        time_limited |= limited
        if rank == 1:
            status = rank_status
        if rank_status in (Status.INFEASIBLE, Status.UNKNOWN):
            break
        plans.append(RankedPlan(rank, plan, evaluate_plan(scenario, plan), rank_status, steps))
        handles.forbid_sources(plan.sources)
        if time.monotonic() >= deadline:
            time_limited = True
            break
    if not plans and status is Status.UNKNOWN and not time_limited:
        status = Status.INFEASIBLE
    if progress:
        progress(top, top)
    return SearchResult(
        scenario, status, tuple(plans), handles.precision, time.monotonic() - started, time_limited
    )


def _solve_rank(
    handles: ClockModel, deadline: float, workers: int
) -> tuple[Plan, Status, int, bool]:
    model = handles.model
    model.clear_hints()
    model.minimize(handles.worst)
    first = _run(model, deadline, workers)
    status = _STATUS.get(first.status, Status.UNKNOWN)
    limited = first.status == cp_model.UNKNOWN or first.status == cp_model.FEASIBLE
    if status in (Status.INFEASIBLE, Status.UNKNOWN):
        return (Plan({}, {}), status, SHARE_STEPS + 1, limited)
    steps = int(first.solver.value(handles.worst))
    plan = handles.read_plan(first.solver)
    if handles.settings or handles.preference is not None:
        _hint(handles, first.solver)
        holding = model.new_bool_var(f"hold_worst_{steps}")
        model.add(handles.worst <= steps).only_enforce_if(holding)
        model.add_assumptions([holding])
        model.maximize(handles.tie_breaker())
        second = _run(model, deadline, workers)
        model.clear_assumptions()
        if second.status in (cp_model.OPTIMAL, cp_model.FEASIBLE):
            plan = handles.read_plan(second.solver)
        if second.status != cp_model.OPTIMAL:
            status, limited = Status.FEASIBLE, True
        model.clear_hints()
    return plan, status, steps, limited


@dataclass
class _Run:
    solver: cp_model.CpSolver
    status: int


def _run(model: cp_model.CpModel, deadline: float, workers: int) -> _Run:
    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = max(0.01, deadline - time.monotonic())
    solver.parameters.num_workers = workers
    solver.parameters.random_seed = 1
    status = solver.solve(model)
    return _Run(solver, status)


def _hint(handles: ClockModel, solver: cp_model.CpSolver) -> None:
    for var in list(handles.settings.values()) + list(handles.source_values.values()):
        handles.model.add_hint(var, solver.value(var))
