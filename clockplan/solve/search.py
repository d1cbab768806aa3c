"""Search: rank plans stage by stage, every stage proved, the same plan on every machine.

"The best plan" is defined lexicographically (README, "How plans are ranked"):

1. the scenario's goals in its ranking order, by default the worst share of an allowance
   (in steps of 1/10 000, rounded up), then the cost of the oscillators in use, then the
   clocks marked "fastest" (their sum in whole hertz, larger first), then the rates under a
   ceiling (likewise); ``rank_by`` may put any of these first;
2. every rate's share (their sum in steps: no rate can improve without another worsening);
3. every rate's worst-case error (their sum in steps of 10**-9), the same rule at a finer
   grain, so that errors far below the share's resolution still count;
4. each rate in file order at its least exact worst case |e| + b(1 + e): what the steps
   cannot tell apart is settled in fractions (a rate whose steps are only an upper bound,
   listed in ``bounded_errors``, keeps its steps);
5. the smallest settings, in a fixed order (sources, PLLs, dividers, muxes in file order):
   the plan is unique.

Each stage is a CP-SAT solve (or a few) that must end OPTIMAL; its value is then held (by
narrowing the domain of the variable that carries it, or by constraints enforced for this
rank only) for the stages after it. A rate's own settings
are not searched: :mod:`clockplan.settle` computes them exactly for the clock that feeds it.
Nothing depends on wall-clock time except whether a stage is proved before the time
limit; a stage the limit cuts short is reported by name and the plan is marked unproved.

Rank k is the best plan among the oscillator choices not ranked before, where a choice is
the set of oscillators the plan uses with their frequencies.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from threading import Event, Thread
from typing import cast

from ortools.sat import sat_parameters_pb2
from ortools.sat.python import cp_model

from clockplan.errors import InputError, InternalError
from clockplan.evaluate import evaluate_plan
from clockplan.plan import Plan
from clockplan.result import RankedPlan, SearchResult, Stage, Status
from clockplan.scenario import Scenario
from clockplan.settle import settle_settings
from clockplan.solve.model import (
    ERROR_DIGITS,
    ClockModel,
    Expression,
    RateHandles,
    build_model,
)

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
    "exact": "exact errors",
    "settings": "smallest settings",
}
"""Each ranking criterion's name as printed."""


def ranking_order(scenario: Scenario) -> tuple[str, ...]:
    """The stages of the ranking, most important first (criteria keys of STAGE_NAMES)."""
    return (*scenario.rank_by, "shares", "errors", "exact", "settings")


def search(
    scenario: Scenario,
    *,
    top: int = 5,
    time_limit: float = DEFAULT_TIME_LIMIT,
    workers: int = DEFAULT_WORKERS,
    progress: Callable[[int, int], None] | None = None,
    started: float | None = None,
    closest: bool = False,
) -> SearchResult:
    """Rank up to ``top`` plans, each for a different choice of oscillators.

    ``time_limit`` bounds the whole search from ``started`` (a ``time.monotonic()`` reading,
    by default now), model building included. With ``closest`` the rates' allowances are
    let go (every hardware limit still holds): the plans come as close as they can, by the
    same ranking, and their evaluations say which rates fail and by how much.
    """
    if isinstance(top, bool) or not isinstance(top, int) or top < 1:
        raise InputError("top", f"{top!r} is not a positive count of plans")
    if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers <= MAX_WORKERS:
        raise InputError("workers", f"{workers!r} is not a thread count from 1 to {MAX_WORKERS}")
    if not isinstance(time_limit, (int, float)) or not time_limit > 0:
        raise InputError("time_limit", f"{time_limit!r} is not a positive number of seconds")
    started = time.monotonic() if started is None else started
    deadline = started + time_limit
    handles = build_model(scenario, relaxable=closest)
    for limit in handles.limits.values():  # only in a relaxable model
        _set_domain(limit.literal, [0, 0] if limit.key.endswith(" allowance") else [1, 1])
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
        assert found.choice is not None  # a plan always comes with its choice
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
        closest=closest,
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
        self.switches: list[cp_model.IntVar] = []
        """Literals that hold this rank's added constraints, all released when it ends."""

    def solve(self) -> _Found:
        try:
            return self.stages_in_order()
        finally:
            for switch in self.switches:
                _set_domain(switch, [0, 0])

    def stages_in_order(self) -> _Found:
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
        if key == "exact":
            return self.exact_stage(name)
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

    def exact_stage(self, name: str) -> str:
        """Each rate in file order at its least exact worst case among the plans tied so far,
        then held there: what the steps of 10**-9 cannot tell apart is settled exactly."""
        for rate in self.handles.rates:
            if rate.magnitude is None or rate.requirement.setting in self.handles.bounded_errors:
                continue  # no tolerance, or its steps are an upper bound: nothing exact to settle
            outcome = self.least_worst_case(rate)
            if outcome != "done":
                self.stages.append(Stage(name, False))
                return outcome
        self.stages.append(Stage(name, True))
        return "done"

    def least_worst_case(self, rate: RateHandles) -> str:
        """Hold the rate at its least exact worst case among the plans tied so far.

        The worst case is b + |e|(1 ± b), so within one class (an oscillator, fast or slow) it
        is least where |e| is: each class's least |e| is found exactly (Dinkelbach's method on
        the ratio |deviation| / scaled count) and the classes are compared in fractions. A
        class is skipped when even the least |e| of all cannot beat the best so far; exact
        ties go to the earlier class (oscillators in file order, fast before slow)."""
        assert rate.scaled_count is not None and self.solver is not None
        roots = self.handles.roots[rate.node]
        budgets = {root: self.handles.scenario.source(root).budget for root in roots}
        classes = [(root, fast) for root in roots for fast in (True, False)]
        start = self.solver
        least_class = _class_of(rate, roots, start)
        if len(roots) == 1 and _deviation(rate, start) == 0:
            self.hold_error(rate, least_class, Fraction(0), self.switch())
            return "done"
        outcome, least = self.least_error(rate, None)
        if outcome == "big":
            return "done"  # too large to compare exactly: the steps of 10**-9 stand
        if outcome != "done" or least is None:
            return outcome
        least_class = _class_of(rate, roots, self.solver)
        best = (_worst_case(least, budgets, least_class), classes.index(least_class))
        best_error, best_solver = least, self.solver
        for index, (root, fast) in enumerate(classes):
            lower = _worst_case(least, budgets, (root, fast))
            if index == best[1] or (lower, index) > best:
                continue
            outcome, error = self.least_error(rate, (root, fast), best[0])
            if outcome == "big":
                return "done"
            if outcome != "done":
                return outcome
            if error is None:
                continue
            worst = _worst_case(error, budgets, (root, fast))
            if (worst, index) < best:
                best, best_error, best_solver = (worst, index), error, self.solver
        self.solver = best_solver
        self.hint(best_solver)
        self.hold_error(rate, classes[best[1]], best_error, self.switch())
        return "done"

    def least_error(
        self, rate: RateHandles, within: tuple[str, bool] | None, below: Fraction | None = None
    ) -> tuple[str, Fraction | None]:
        """The least exact |e| of the rate among the plans held so far (within a class, whose
        worst case could reach ``below``); "big" when the numbers pass 64 bits."""
        assert rate.scaled_count is not None
        if within is None:
            assert self.solver is not None
            current = _error_of(rate, self.solver)
        else:
            root, fast = within
            budget = self.handles.scenario.source(root).budget
            assert below is not None
            room = max((below - budget) / (1 + budget if fast else 1 - budget), Fraction(0))
            trial = self.switch()
            if self.hold_error(rate, within, room, trial, strict=False) == "big":
                return "big", None
            outcome = self.run(None, minimize=True, may_fail=True)
            _set_domain(trial, [0, 0])
            if outcome != "done":
                return ("done", None) if outcome == "none" else (outcome, None)
            assert self.solver is not None
            current = _error_of(rate, self.solver)
        while current > 0:
            trial = self.switch()
            gap = self.hold_error(rate, within, current, trial, objective=True)
            if isinstance(gap, str):
                return "big", None
            outcome = self.run(gap, minimize=True)
            _set_domain(trial, [0, 0])
            if outcome != "done":
                return outcome, None
            assert self.solver is not None
            improved = _error_of(rate, self.solver)
            if improved >= current:
                break
            current = improved
        return "done", current

    def hold_error(
        self,
        rate: RateHandles,
        within: tuple[str, bool] | None,
        error: Fraction,
        switch: cp_model.IntVar,
        *,
        strict: bool = True,
        objective: bool = False,
    ) -> str | Expression:
        """While ``switch`` holds: the rate in the class ``within`` (when given) with
        |e| ≤ error = p/q, as q·|deviation| ≤ p·scaled count. With ``objective``, return
        q·|deviation| − p·scaled count to minimise instead of holding it. Without ``strict``
        only the bound the error puts on |deviation| is held. "big" past 64 bits."""
        assert rate.magnitude is not None and rate.deviation is not None
        assert rate.scaled_count is not None
        model, scaled = self.model, rate.scaled_count
        p, q = error.numerator, error.denominator
        limit = math.floor(error * scaled.high)
        if strict and max(q * limit, p * scaled.high) > TERM_LIMIT:
            self.handles.bounded_errors.add(rate.requirement.setting)
            return "big"
        # copies with narrow domains, so that CP-SAT sees the terms' true bounds
        key = rate.requirement.setting
        magnitude = model.new_int_var(0, limit, f"tie_magnitude[{key}]")
        deviation = model.new_int_var(-limit, limit, f"tie_deviation[{key}]")
        model.add(magnitude == rate.magnitude).only_enforce_if(switch)
        model.add(deviation == rate.deviation).only_enforce_if(switch)
        if within is not None:
            root, fast = within
            active = self.handles.roots[rate.node][root]
            if active is not True:
                model.add_bool_and([active]).only_enforce_if(switch)
            model.add(deviation >= 0 if fast else deviation <= -1).only_enforce_if(switch)
        if not strict:
            return "done"
        count = model.new_int_var(scaled.low, scaled.high, f"tie_count[{key}]")
        model.add(count == scaled.expr).only_enforce_if(switch)
        if objective:
            return q * magnitude - p * count
        model.add(q * magnitude <= p * count).only_enforce_if(switch)
        return "done"

    def switch(self) -> cp_model.IntVar:
        """A literal fixed true that enforces constraints until the rank ends."""
        literal = self.model.new_bool_var("switch")
        _set_domain(literal, [1, 1])
        self.switches.append(literal)
        return literal

    def run(self, objective: Expression | None, *, minimize: bool, may_fail: bool = False) -> str:
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
            if self.solver is not None and not may_fail:
                raise InternalError("a stage held at its proved value left no plan")
            return "none"
        self.time_limited |= not interrupted
        return "cut" if self.solver is not None and status != cp_model.INFEASIBLE else "none"

    def hint(self, solver: cp_model.CpSolver) -> None:
        """Start the next stage from this solution."""
        self.model.clear_hints()
        for var in self.handles.decisions:
            self.model.add_hint(var, solver.value(var))


TERM_LIMIT = 2**59
"""Largest term of a tie's linear form: four such terms stay within CP-SAT's 2**62."""


def _error_of(rate: RateHandles, solver: cp_model.CpSolver) -> Fraction:
    """The rate's exact |e| in the solution."""
    assert rate.magnitude is not None and rate.scaled_count is not None
    return Fraction(int(solver.value(rate.magnitude)), int(solver.value(rate.scaled_count.expr)))


def _class_of(
    rate: RateHandles, roots: dict[str, cp_model.IntVar | bool], solver: cp_model.CpSolver
) -> tuple[str, bool]:
    """The solution's oscillator for the rate, and whether the rate runs fast (e ≥ 0)."""
    root = next(name for name, active in roots.items() if _holds(solver, active))
    return root, _deviation(rate, solver) >= 0


def _deviation(rate: RateHandles, solver: cp_model.CpSolver) -> int:
    """The rate's deviation in the solution (its sign is the sign of e)."""
    assert rate.deviation is not None
    return int(solver.value(rate.deviation))


def _worst_case(
    error: Fraction, budgets: dict[str, Fraction], within: tuple[str, bool]
) -> Fraction:
    """b + |e|(1 ± b): the exact worst case of an error of this size in this class."""
    budget = budgets[within[0]]
    return budget + error * (1 + budget if within[1] else 1 - budget)


def _holds(solver: cp_model.CpSolver, literal: cp_model.IntVar | bool) -> bool:
    return literal if isinstance(literal, bool) else bool(solver.boolean_value(literal))


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
            outcome.append(cast(int, solver.solve(model)))  # annotated as the enum class
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
