"""Why no plan fits: the smallest set of limits that cannot hold together, and what to move.

The scenario is rebuilt with every limit (allowance, PFD, VCO, min, max, ceiling)
guarded by a literal. CP-SAT, given all guards as assumptions, proves the model
infeasible and names a sufficient set; a deletion pass then drops every limit whose
removal keeps the rest infeasible, which leaves a minimal conflicting set. For each
member, the model is solved again without it, and the closest plan says by how much
that limit must move.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

from ortools.sat.python import cp_model

from clockplan.evaluate import Evaluation, RateCheck, evaluate_plan
from clockplan.plan import Plan
from clockplan.quantities import format_relative
from clockplan.scenario import Scenario
from clockplan.solve.model import ClockModel, Limit, build_model
from clockplan.tree import feeding_source_names

__all__ = ["Relaxation", "Explanation", "explain_infeasibility"]


@dataclass(frozen=True)
class Relaxation:
    """What happens when one limit of the conflict is let go."""

    limit: str
    """The limit in words."""
    advice: str
    """How far the limit must move, with the numbers of the closest plan."""
    plan: Plan | None
    evaluation: Evaluation | None


@dataclass(frozen=True)
class Explanation:
    """A conflicting set of limits and one relaxation per member."""

    conflict: tuple[str, ...]
    """The limits, in words, that cannot all hold."""
    minimal: bool
    """Whether the deletion pass finished (every member is needed for the conflict)."""
    relaxations: tuple[Relaxation, ...]
    beyond_sources: tuple[str, ...] = ()
    """Rates that no setting can save: every source that may feed them has a budget
    larger than their allowance (each alone is a conflict; all are listed here)."""


def explain_infeasibility(scenario: Scenario, *, time_limit: float = 30.0) -> Explanation:
    """Name a minimal set of conflicting limits of ``scenario`` and how to relax each."""
    deadline = time.monotonic() + time_limit
    beyond = beyond_sources(scenario)
    handles = build_model(scenario, relaxable=True)
    limits = list(handles.limits.values())
    status, solver = _solve(handles, limits, deadline)
    if status != cp_model.INFEASIBLE:
        return Explanation((), False, (), beyond)
    by_index = {limit.literal.index: limit for limit in limits}
    core = [by_index[i] for i in solver.sufficient_assumptions_for_infeasibility() if i in by_index]
    minimal = True
    for limit in list(core):
        trial = [other for other in core if other is not limit]
        status, _ = _solve(handles, trial, deadline)
        if status == cp_model.INFEASIBLE:
            core = trial
        elif status == cp_model.UNKNOWN:
            minimal = False
            break
    relaxations = tuple(_relax(scenario, handles, limits, limit, deadline) for limit in core)
    return Explanation(tuple(limit.text for limit in core), minimal, relaxations, beyond)


def beyond_sources(scenario: Scenario) -> tuple[str, ...]:
    """Rates whose allowance is smaller than the budget of every source that may feed them."""
    found = []
    for peripheral in scenario.peripherals:
        sources = [
            scenario.source(name) for name in feeding_source_names(scenario, peripheral.clock)
        ]
        tightest = min(sources, key=lambda source: source.budget)
        for requirement in peripheral.requirements:
            allowance = max(option.allowance for option in requirement.choices)
            if requirement.ceiling or tightest.budget <= allowance:
                continue
            found.append(
                f"{requirement.peripheral} ({requirement.label}) allows "
                f"{format_relative(allowance)}, but {tightest.name} ({tightest.kind}) alone "
                f"has a budget of {format_relative(tightest.budget)}: over by "
                f"{format_relative(tightest.budget - allowance)}"
            )
    return tuple(found)


def _solve(
    handles: ClockModel, holding: list[Limit], deadline: float, objective: object = None
) -> tuple[int, cp_model.CpSolver]:
    model = handles.model
    model.clear_assumptions()
    model.clear_objective()
    if objective is not None:
        model.minimize(objective)  # type: ignore[arg-type]
    model.add_assumptions([limit.literal for limit in holding])
    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = max(0.01, deadline - time.monotonic())
    solver.parameters.num_workers = 1  # core extraction needs a single worker
    solver.parameters.random_seed = 1
    return solver.solve(model), solver


def _relax(
    scenario: Scenario, handles: ClockModel, limits: list[Limit], limit: Limit, deadline: float
) -> Relaxation:
    others = [other for other in limits if other is not limit]
    objective = limit.share if limit.share is not None else handles.worst
    status, solver = _solve(handles, others, deadline, objective)
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return Relaxation(
            limit.text, "letting this limit go alone does not give a plan", None, None
        )
    plan = handles.read_plan(solver)
    evaluation = evaluate_plan(scenario, plan)
    return Relaxation(limit.text, _advice(limit, evaluation), plan, evaluation)


def _advice(limit: Limit, evaluation: Evaluation) -> str:
    requirement = limit.requirement
    if requirement is not None:
        check = next(c for c in evaluation.checks if c.requirement == requirement)
        if not requirement.ceiling:
            return _allowance_advice(check)
    if evaluation.violations:
        return "a plan exists where " + "; ".join(evaluation.violations)
    failing = [check for check in evaluation.checks if not check.passes]
    if failing:
        return "a plan exists, but it fails " + ", ".join(c.requirement.peripheral for c in failing)
    return "a plan exists without this limit"


def _allowance_advice(check: RateCheck) -> str:
    requirement = check.requirement
    label = f"{requirement.peripheral} ({requirement.label})"
    advice = (
        f"allow {format_relative(check.worst_case)} on {label} instead of "
        f"{format_relative(check.allowance)}"
    )
    room = check.allowance - abs(check.error)
    if room > 0:
        advice += (
            f", or choose a source with a budget of at most {format_relative(room)} "
            f"({check.source} has {format_relative(check.source_budget)})"
        )
    return advice
