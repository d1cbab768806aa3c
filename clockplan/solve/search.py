"""Search: rank plans stage by stage, every stage proved, the same plan on every machine.

"The best plan" is defined lexicographically (README, "How plans are ranked"):

1. the scenario's goals in its ranking order, by default the worst share of an allowance
   (in steps of 1/10 000, rounded up), then the cost of the oscillators in use, then the
   clocks marked "fastest" (their sum in whole hertz, larger first), then the rates under a
   ceiling (likewise); ``rank_by`` may put any of these first;
2. every rate's share (their sum in steps: no rate can improve without another worsening);
3. every rate's worst-case error (their sum in steps of 10**-9), the same rule at a finer
   grain, so that errors far below the share's resolution still count;
4. the smallest settings, in a fixed order (sources, PLLs, dividers, muxes in file order):
   the plan is unique.

Each stage is a CP-SAT solve that must end OPTIMAL; its value is then held (by narrowing
the domain of the variable that carries it) for the stages after it. A rate's own settings
are not searched: :mod:`clockplan.settle` computes them exactly for the clock that feeds it.
Nothing depends on wall-clock time except whether a stage is proved before the time
limit; a stage the limit cuts short is reported by name and the plan is marked unproved.

Rank k is the best plan among the oscillator choices not ranked before, where a choice is
the set of oscillators the plan uses with their frequencies.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from threading import Event, Thread

from ortools.sat import sat_parameters_pb2
from ortools.sat.python import cp_model

from clockplan.errors import InputError, InternalError
from clockplan.evaluate import evaluate_plan
from clockplan.plan import Plan
from clockplan.result import RankedPlan, SearchResult, Stage, Status
from clockplan.scenario import Scenario
from clockplan.settle import settle_settings
from clockplan.solve.model import ERROR_DIGITS, ClockModel, build_model

__all__ = [
    "search",
    "ranking_order",
    "STAGE_NAMES",
    "DEFAULT_TIME_LIMIT",
    "DEFAULT_WORKERS",
    "MAX_WORKERS",
]

DEFAULT_TIME_LIMIT = 60.0
"""Seconds the whole search may take unless the caller says otherwise."""
DEFAULT_WORKERS = 8
"""CP-SAT search workers (threads); its portfolio pays even on two cores."""
MAX_WORKERS = 64

STAGE_NAMES = {
    "worst-share": "worst share",
    "cost": "cost",
    "fastest": "fastest clocks",
    "ceilings": "ceiling rates",
    "shares": "sum of shares",
    "errors": "sum of errors",
    "settings": "smallest settings",
}
"""Each ranking criterion's name as printed."""


def ranking_order(scenario: Scenario) -> tuple[str, ...]:
    """The stages of the ranking, most important first (criteria keys of STAGE_NAMES)."""
    return (*scenario.rank_by, "shares", "errors", "settings")


def search(
    scenario: Scenario,
    *,
    top: int = 5,
    time_limit: float = DEFAULT_TIME_LIMIT,
    workers: int = DEFAULT_WORKERS,
    progress: Callable[[int, int], None] | None = None,
    started: float | None = None,
) -> SearchResult:
    """Rank up to ``top`` plans, each for a different choice of oscillators.

    ``time_limit`` bounds the whole search from ``started`` (a ``time.monotonic()`` reading,
    by default now), model building included.
    """
    if isinstance(top, bool) or not isinstance(top, int) or top < 1:
        raise InputError("top", f"{top!r} is not a positive count of plans")
    if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers <= MAX_WORKERS:
        raise InputError("workers", f"{workers!r} is not a thread count from 1 to {MAX_WORKERS}")
    if not isinstance(time_limit, (int, float)) or not time_limit > 0:
        raise InputError("time_limit", f"{time_limit!r} is not a positive number of seconds")
    started = time.monotonic() if started is None else started
    deadline = started + time_limit
    handles = build_model(scenario)
    order = ranking_order(scenario)
    domains = _Domains(handles)
    plans: list[RankedPlan] = []
    status = Status.UNKNOWN
    time_limited = interrupted = exhausted = False
    for rank in range(1, top + 1):
        if progress:
            progress(rank - 1, top)
        domains.restore()
        found = _Ranker(handles, order, deadline, workers, domains).solve()
        interrupted |= found.interrupted
        time_limited |= found.time_limited
        if found.plan is None:
            exhausted = found.exhausted
            if rank == 1:
                status = Status.INFEASIBLE if exhausted else Status.UNKNOWN
            break
        evaluation = evaluate_plan(scenario, found.plan)
        proved = all(stage.proved for stage in found.stages)
        ranked_status = Status.OPTIMAL if proved else Status.FEASIBLE
        if rank == 1:
            status = ranked_status
        plans.append(
            RankedPlan(rank, found.plan, evaluation, ranked_status, found.stages, found.choice)
        )
        if interrupted or not proved:
            break
        handles.exclude_choice(found.choice)
    if progress:
        progress(top, top)
    precisions = {
        rate.requirement.setting: ERROR_DIGITS for rate in handles.rates if rate.share is not None
    }
    return SearchResult(
        scenario=scenario,
        status=status,
        plans=tuple(plans),
        order=tuple(STAGE_NAMES[key] for key in order),
        elapsed=time.monotonic() - started,
        time_limited=time_limited,
        exhausted=exhausted,
        interrupted=interrupted,
        precisions=precisions,
        bounded_errors=frozenset(handles.bounded_errors),
        rounded_limits=frozenset(handles.rounded_limits),
    )


@dataclass(frozen=True)
class _Found:
    """One rank's outcome."""

    plan: Plan | None
    stages: tuple[Stage, ...] = ()
    choice: dict[str, Fraction] | None = None
    time_limited: bool = False
    interrupted: bool = False
    exhausted: bool = False
    """Proved: no plan is left among the choices not ranked yet."""


class _Domains:
    """The domains of the variables stages narrow, kept so each rank starts afresh."""

    def __init__(self, handles: ClockModel) -> None:
        targets = [
            handles.worst,
            handles.cost_total,
            handles.fastest_total,
            handles.ceilings_total,
            handles.shares_total,
            handles.errors_total,
        ]
        variables = [var for var in targets if var is not None]
        variables += [var for var, _, _ in handles.order]
        self.saved = {var.index: (var, list(var.proto.domain)) for var in variables}

    def restore(self) -> None:
        for var, domain in self.saved.values():
            _set_domain(var, domain)


def _set_domain(var: cp_model.IntVar, bounds: list[int]) -> None:
    domain = var.proto.domain
    domain.clear()
    domain.extend(bounds)


class _Ranker:
    """Solves one rank stage by stage."""

    def __init__(
        self,
        handles: ClockModel,
        order: tuple[str, ...],
        deadline: float,
        workers: int,
        domains: _Domains,
    ) -> None:
        self.handles = handles
        self.model = handles.model
        self.order = order
        self.deadline = deadline
        self.workers = workers
        self.stages: list[Stage] = []
        self.solver: cp_model.CpSolver | None = None
        self.time_limited = False
        self.interrupted = False

    def solve(self) -> _Found:
        self.model.clear_hints()
        stopped = False
        for key in self.order:
            name = STAGE_NAMES[key]
            if stopped:
                self.stages.append(Stage(name, False))
                continue
            outcome = self.stage(key, name)
            if outcome == "none":
                if self.solver is None:
                    exhausted = not (self.time_limited or self.interrupted)
                    return _Found(
                        None,
                        time_limited=self.time_limited,
                        interrupted=self.interrupted,
                        exhausted=exhausted,
                    )
                stopped = True
            elif outcome == "cut":
                stopped = True
        if self.solver is None:  # every stage was empty: any plan will do, and it is unique
            status = self.run(None, minimize=True)
            if status == "none":
                return _Found(None, exhausted=not self.time_limited, time_limited=self.time_limited)
        assert self.solver is not None
        tree = self.handles.read_tree(self.solver)
        rates = settle_settings(self.handles.scenario, tree.clocks, tree.roots)
        plan = Plan(tree.sources, {**tree.settings, **rates})
        return _Found(
            plan,
            tuple(self.stages),
            self.handles.read_choice(self.solver),
            self.time_limited,
            self.interrupted,
        )

    def stage(self, key: str, name: str) -> str:
        """Solve one stage and hold its value; "done", "cut" (not proved) or "none"."""
        if key == "settings":
            return self.settings_stage(name)
        target, maximize = self.objective(key)
        if target is None:
            return "done"
        outcome = self.run(target, minimize=not maximize)
        if outcome in ("none", "cut"):
            self.stages.append(Stage(name, False))
            return outcome
        assert self.solver is not None
        value = int(self.solver.value(target))
        low, high = _bounds(target)
        _set_domain(target, [value, high] if maximize else [low, value])
        self.stages.append(Stage(name, True, value))
        return "done"

    def objective(self, key: str) -> tuple[cp_model.IntVar | None, bool]:
        """The variable a stage optimises, and whether larger is better."""
        handles = self.handles
        return {
            "worst-share": (handles.worst, False),
            "cost": (handles.cost_total, False),
            "fastest": (handles.fastest_total, True),
            "ceilings": (handles.ceilings_total, True),
            "shares": (handles.shares_total if len(handles.rates) > 1 else None, False),
            "errors": (handles.errors_total, False),
        }[key]

    def settings_stage(self, name: str) -> str:
        """Smallest settings first, in the fixed order: each setting in turn at the smallest
        value the stages before leave it, then held there."""
        for var, low, high in self.handles.order:
            if low == high:
                continue
            outcome = self.run(var, minimize=True)
            if outcome in ("none", "cut"):
                self.stages.append(Stage(name, False))
                return outcome
            assert self.solver is not None
            value = int(self.solver.value(var))
            _set_domain(var, [value, value])
        self.stages.append(Stage(name, True))
        return "done"

    def run(self, objective: cp_model.LinearExprT | None, *, minimize: bool) -> str:
        """One CP-SAT solve: "done" (proved), "cut" (a plan, not proved) or "none" (no plan:
        proved, or the time limit came before any)."""
        model = self.model
        model.clear_objective()
        if objective is not None:
            if minimize:
                model.minimize(objective)
            else:
                model.maximize(objective)
        solver, status, interrupted = _solve(model, self.deadline, self.workers)
        if status == cp_model.MODEL_INVALID:
            raise InternalError(
                f"CP-SAT refused the model: {model.validate() or 'no reason given'}"
            )
        self.interrupted |= interrupted
        if status in (cp_model.OPTIMAL, cp_model.FEASIBLE):
            self.solver = solver
            self.hint(solver)
        if status == cp_model.OPTIMAL and not interrupted:
            return "done"
        if status == cp_model.INFEASIBLE and not interrupted:
            if self.solver is not None:
                raise InternalError("a stage held at its proved value left no plan")
            return "none"
        self.time_limited |= not interrupted
        return "cut" if self.solver is not None and status != cp_model.INFEASIBLE else "none"

    def hint(self, solver: cp_model.CpSolver) -> None:
        """Start the next stage from this solution."""
        self.model.clear_hints()
        for var in self.handles.decisions:
            self.model.add_hint(var, solver.value(var))


def _bounds(var: cp_model.IntVar) -> tuple[int, int]:
    domain = list(var.proto.domain)
    return domain[0], domain[-1]


def _solve(
    model: cp_model.CpModel, deadline: float, workers: int
) -> tuple[cp_model.CpSolver, int, bool]:
    """One solve with the search's settings (see :func:`_parameters`)."""
    return _solve_once(model, deadline, _parameters(workers))


def _parameters(workers: int) -> sat_parameters_pb2.SatParameters:
    """The solver's settings. One worker restarts often and switches between CP-SAT's
    strategies (its default single-thread search stalls on these models); several workers
    run CP-SAT's own portfolio. Probing is off: with it CP-SAT once aborted the process on
    a product its presolve had merged (the model now avoids that shape, see
    tests/test_solver.py; probing stays off until measured). Only speed depends on these
    settings: every stage's optimum is proved."""
    parameters = sat_parameters_pb2.SatParameters()
    parameters.num_workers = workers
    if workers == 1:
        parameters.search_branching = cp_model.PORTFOLIO_WITH_QUICK_RESTART_SEARCH
    parameters.random_seed = 1
    parameters.catch_sigint_signal = False
    parameters.cp_model_probing_level = 0
    return parameters


def _solve_once(
    model: cp_model.CpModel, deadline: float, parameters: sat_parameters_pb2.SatParameters
) -> tuple[cp_model.CpSolver, int, bool]:
    """Solve in a thread so that Ctrl-C in the main thread can stop the search gracefully."""
    solver = cp_model.CpSolver()
    solver.parameters.CopyFrom(parameters)
    solver.parameters.max_time_in_seconds = max(0.01, deadline - time.monotonic())
    outcome: list[int] = []
    done = Event()

    def solve() -> None:
        try:
            outcome.append(solver.solve(model))
        finally:
            done.set()

    thread = Thread(target=solve, daemon=True)
    interrupted = False
    while True:
        try:
            # Ctrl-C may come while the thread starts, before the solver runs: start inside
            # the guard, and ask the solver to stop on every turn once interrupted.
            if thread.ident is None:
                thread.start()
            if interrupted:
                solver.stop_search()
            # Event.wait, not Thread.join: an interrupted join can report a live thread dead.
            if done.wait(0.05):
                break
        except KeyboardInterrupt:
            interrupted = True
    if not outcome:
        raise InternalError("CP-SAT stopped without a status")
    return solver, outcome[0], interrupted
