"""Search: solve the model, rank the best plan for each oscillator choice, report honestly.

Rank 1 is the proven best plan overall; rank k is the proven best plan among the
oscillator choices not yet ranked. Each rank is solved in two stages: first the
worst share of an allowance is minimised (its status is the plan's status); then,
holding it, the tie-breakers in order: clocks marked "fastest" as fast as allowed,
rates under a ceiling as fast as allowed, the smallest sum of every rate's share,
the earlier candidate frequency (catalog or list order), the smallest sum of
settings. The tie-breaking stages may take TIE_BREAK_SECONDS or as long as the first
stage, whichever is more; when it is proved too (``tie_breaks_proved``), the plan does not
depend on how many workers CP-SAT runs, save for exact ties on all of these.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from enum import StrEnum
from threading import Event, Thread

from ortools.sat.python import cp_model

from clockplan.evaluate import Evaluation, evaluate_plan
from clockplan.plan import Plan
from clockplan.scenario import Scenario
from clockplan.solve.model import SHARE_STEPS, ClockModel, build_model

__all__ = ["Status", "RankedPlan", "SearchResult", "search", "DEFAULT_TIME_LIMIT"]

DEFAULT_TIME_LIMIT = 60.0
"""Seconds the whole search may take unless the caller says otherwise."""
TIE_BREAK_SECONDS = 1.0
"""The tie-breaking stages may take this long together, or as long as the first stage took,
whichever is more."""
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
    tie_breaks_proved: bool = True
    """Whether the tie-breaking stage was proved too (it has a shorter time limit)."""


@dataclass(frozen=True)
class SearchResult:
    """The ranked plans and what the search could prove about them."""

    scenario: Scenario
    status: Status
    """Status of rank 1 (the answer to "what is the best plan?")."""
    plans: tuple[RankedPlan, ...]
    precisions: dict[str, int]
    """Each rate's synthesis error entered the objective rounded up to 10**-digits."""
    elapsed: float
    """Seconds spent searching."""
    time_limited: bool
    """Whether the time limit cut any part of the search short."""
    rounded_limits: frozenset[str] = frozenset()
    """Rates whose hard limit was checked on the rounded-up error (64-bit room ran out)."""
    interrupted: bool = False
    """Whether Ctrl-C stopped the search; the plans are the best found until then."""

    @property
    def precision(self) -> int:
        """The coarsest rounding of any rate's error in the objective, in decimal digits."""
        return min(self.precisions.values(), default=9)


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
    interrupted = False
    for rank in range(1, top + 1):
        if progress:
            progress(rank - 1, top)
        found = _solve_rank(handles, deadline, workers)
        time_limited |= found.time_limited
        interrupted |= found.interrupted
        if rank == 1:
            status = found.status
        if found.status in (Status.INFEASIBLE, Status.UNKNOWN):
            break
        evaluation = evaluate_plan(scenario, found.plan)
        plans.append(
            RankedPlan(
                rank,
                found.plan,
                evaluation,
                found.status,
                found.worst_steps,
                found.tie_breaks_proved,
            )
        )
        if found.interrupted:
            break
        handles.forbid_sources(found.plan.sources)
        if time.monotonic() >= deadline:
            time_limited = True
            break
    if not plans and status is Status.UNKNOWN and not (time_limited or interrupted):
        status = Status.INFEASIBLE
    if progress:
        progress(top, top)
    return SearchResult(
        scenario,
        status,
        tuple(plans),
        dict(handles.precisions),
        time.monotonic() - started,
        time_limited,
        frozenset(handles.rounded_limits),
        interrupted,
    )


@dataclass(frozen=True)
class _Rank:
    plan: Plan
    status: Status
    worst_steps: int
    time_limited: bool
    tie_breaks_proved: bool
    interrupted: bool = False


def _solve_rank(handles: ClockModel, deadline: float, workers: int) -> _Rank:
    model = handles.model
    model.clear_hints()
    began = time.monotonic()
    holding: list[cp_model.IntVar] = []
    cost_proved = True
    cheapest = _Run(cp_model.CpSolver(), cp_model.OPTIMAL)
    if handles.cost is not None and handles.scenario.rank_by == "cost":
        model.minimize(handles.cost)
        cheapest = _run(model, deadline, workers)
        cost_proved = cheapest.status == cp_model.OPTIMAL
        if cheapest.status in (cp_model.OPTIMAL, cp_model.FEASIBLE):
            cost = int(cheapest.solver.value(handles.cost))
            holding.append(_hold(model, handles.cost, cost))
            model.add_assumptions(holding)
            _hint(handles, cheapest.solver)
    model.minimize(handles.worst)
    first = _run(model, deadline, workers)
    model.clear_hints()
    model.clear_assumptions()
    status = _STATUS.get(first.status, Status.UNKNOWN)
    limited = first.status in (cp_model.UNKNOWN, cp_model.FEASIBLE) or not cost_proved
    if status is Status.OPTIMAL and not cost_proved:
        status = Status.FEASIBLE
    interrupted = first.interrupted or cheapest.interrupted
    if status in (Status.INFEASIBLE, Status.UNKNOWN):
        return _Rank(Plan({}, {}), status, SHARE_STEPS + 1, limited, False, interrupted)
    steps = int(first.solver.value(handles.worst))
    plan = handles.read_plan(first.solver)
    proved = not interrupted
    if interrupted:
        return _Rank(plan, status, steps, True, False, True)
    holding.append(_hold(model, handles.worst, steps))
    tie_deadline = min(
        deadline, time.monotonic() + max(TIE_BREAK_SECONDS, time.monotonic() - began)
    )
    solver = first.solver
    for expression in handles.tie_breakers():
        _hint(handles, solver)
        model.clear_assumptions()
        model.add_assumptions(holding)
        model.maximize(expression)
        run = _run(model, tie_deadline, workers)
        model.clear_hints()
        interrupted = run.interrupted
        if run.status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
            proved = False
            break
        solver = run.solver
        plan = handles.read_plan(solver)
        if run.status != cp_model.OPTIMAL or interrupted:
            proved = False
            break
        holding.append(_hold(model, expression, int(solver.value(expression)), at_least=True))
    model.clear_assumptions()
    return _Rank(plan, status, steps, limited, proved, interrupted)


@dataclass
class _Run:
    solver: cp_model.CpSolver
    status: int
    interrupted: bool = False


def _run(model: cp_model.CpModel, deadline: float, workers: int) -> _Run:
    """Solve in a thread so that Ctrl-C in the main thread can stop the search gracefully."""
    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = max(0.01, deadline - time.monotonic())
    solver.parameters.num_workers = workers
    solver.parameters.random_seed = 1
    solver.parameters.catch_sigint_signal = False
    outcome: list[int] = []
    done = Event()

    def solve() -> None:
        try:
            outcome.append(solver.solve(model))
        finally:
            done.set()

    Thread(target=solve, daemon=True).start()
    interrupted = False
    while True:
        try:
            # Event.wait, not Thread.join: an interrupted join can report a live thread dead.
            if done.wait(0.05):
                break
        except KeyboardInterrupt:
            interrupted = True
            solver.stop_search()
    if not outcome:
        raise RuntimeError("CP-SAT stopped without a status (see the error above)")
    return _Run(solver, outcome[0], interrupted)


def _hold(
    model: cp_model.CpModel, expression: cp_model.LinearExprT, value: int, *, at_least: bool = False
) -> cp_model.IntVar:
    """A literal that, assumed, keeps ``expression`` at ``value`` (≥ it, or ≤ it for the worst)."""
    literal = model.new_bool_var(f"hold_{len(model.proto.variables)}")
    constraint = expression >= value if at_least else expression <= value
    model.add(constraint).only_enforce_if(literal)
    return literal


def _hint(handles: ClockModel, solver: cp_model.CpSolver) -> None:
    """Hint the settings and oscillator choices of the last solution to the next stage."""
    for var in list(handles.settings.values()) + list(handles.source_values.values()):
        handles.model.add_hint(var, solver.value(var))
