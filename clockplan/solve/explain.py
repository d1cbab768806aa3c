"""Why no plan fits: the smallest set of limits that cannot hold together, and what to move.

The scenario is rebuilt with every limit (allowance, PFD, VCO, min, max, ceiling)
guarded by a literal. CP-SAT, given all guards as assumptions, proves the model
infeasible and names a sufficient set; a deletion pass then drops every limit whose
removal keeps the rest infeasible, which leaves a minimal conflicting set. For each
member, the model is solved again without it, and the closest plan says by how much
that limit must move: proved least when CP-SAT proves it, else an upper bound, and said
so when the time limit stops a step.
"""

from __future__ import annotations

import time
from dataclasses import replace
from fractions import Fraction
from typing import cast

from ortools.sat.python import cp_model

from clockplan.evaluate import Evaluation, RateCheck, evaluate_plan
from clockplan.peripherals.base import Requirement, ToleranceRate
from clockplan.plan import Plan
from clockplan.quantities import format_relative
from clockplan.result import Explanation, Relaxation
from clockplan.scenario import Scenario
from clockplan.settle import settle_settings
from clockplan.solve.model import RELAXED_ERROR, ClockModel, Limit, build_model
from clockplan.topology import feeding_source_names

__all__ = ["explain_infeasibility", "beyond_sources"]


def explain_infeasibility(scenario: Scenario, *, time_limit: float = 30.0) -> Explanation:
    """Name a minimal set of conflicting limits of ``scenario`` and how to relax each."""
    deadline = time.monotonic() + max(time_limit, 0.01)
    beyond = beyond_sources(scenario)
    handles = build_model(scenario, relaxable=True)
    limits = list(handles.limits.values())
    status, solver = _solve(handles, limits, deadline)
    if status != cp_model.INFEASIBLE:
        return Explanation((), False, (), beyond, time_limited=status == cp_model.UNKNOWN)
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
    cut = not minimal or any(
        not relaxation.proved and relaxation.plan is None for relaxation in relaxations
    )
    return Explanation(
        tuple(limit.text for limit in core), minimal, relaxations, beyond, time_limited=cut
    )


def beyond_sources(scenario: Scenario) -> tuple[str, ...]:
    """Rates whose allowance is smaller than the budget of every source that may feed them."""
    found = []
    for peripheral in scenario.peripherals:
        sources = [
            scenario.source(name) for name in feeding_source_names(scenario, peripheral.clock)
        ]
        tightest = min(sources, key=lambda source: source.budget)
        for requirement in peripheral.requirements:
            if not isinstance(requirement, ToleranceRate):
                continue  # a maximum has no allowance for a budget to exceed
            allowance = max(requirement.allowance_of(option) for option in requirement.options)
            if tightest.budget <= allowance:
                continue
            found.append(
                f"{requirement.peripheral} ({requirement.label}) allows "
                f"{format_relative(allowance)}, but {tightest.name} ({tightest.kind}) alone "
                f"has a budget of {format_relative(tightest.budget)}: over by "
                f"{format_relative(tightest.budget - allowance)}"
            )
    return tuple(found)


def _solve(
    handles: ClockModel,
    holding: list[Limit],
    deadline: float,
    objective: cp_model.IntVar | None = None,
) -> tuple[int, cp_model.CpSolver]:
    model = handles.model
    model.clear_assumptions()
    model.clear_objective()
    if objective is not None:
        model.minimize(objective)
    model.add_assumptions([limit.literal for limit in holding])
    return _run(model, deadline)


def _run(model: cp_model.CpModel, deadline: float) -> tuple[int, cp_model.CpSolver]:
    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = max(0.01, deadline - time.monotonic())
    solver.parameters.num_workers = 1  # core extraction needs a single worker
    solver.parameters.random_seed = 1
    return cast(int, solver.solve(model)), solver  # annotated as the enum class


def _relax(
    scenario: Scenario, handles: ClockModel, limits: list[Limit], limit: Limit, deadline: float
) -> Relaxation:
    others = [other for other in limits if other is not limit]
    objective = limit.share if limit.share is not None else handles.worst
    status, solver = _solve(handles, others, deadline, objective)
    if status in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        proved = status == cp_model.OPTIMAL
        plan = _plan(handles, solver)
        evaluation = evaluate_plan(scenario, plan)
        advice = _advice(limit, evaluation)
        if not proved:
            advice += " (an upper bound: the time limit stopped the search for less)"
        return Relaxation(limit.text, advice, plan, evaluation, proved)
    if status == cp_model.UNKNOWN:
        return Relaxation(
            limit.text,
            "the time limit stopped the search before a plan without it",
            None,
            None,
            proved=False,
        )
    if isinstance(limit.requirement, ToleranceRate):
        return _beyond_the_model(scenario, limit, limit.requirement, deadline)
    return Relaxation(
        limit.text, "letting this limit go alone does not give a plan (proved)", None, None
    )


def _beyond_the_model(
    scenario: Scenario, limit: Limit, requirement: Requirement, deadline: float
) -> Relaxation:
    """The relaxable model keeps every rate within 50 % of its target; look past that with
    the rate left out altogether, so that "no plan" is only said when it is proved."""
    without = _without(scenario, requirement)
    handles = build_model(without)
    status, solver = _run(handles.model, deadline)
    if status == cp_model.INFEASIBLE:
        return Relaxation(
            limit.text, "letting this limit go alone does not give a plan (proved)", None, None
        )
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return Relaxation(
            limit.text,
            "the time limit stopped the search before a plan without it",
            None,
            None,
            proved=False,
        )
    tree = handles.read_tree(solver)
    plan = Plan(
        tree.sources, {**tree.settings, **settle_settings(scenario, tree.clocks, tree.roots)}
    )
    evaluation = evaluate_plan(scenario, plan)
    check = next(c for c in evaluation.checks if c.requirement == requirement)
    advice = (
        f"a plan exists only with {requirement.peripheral} ({requirement.label}) more than "
        f"{format_relative(RELAXED_ERROR)} off; one such plan is "
        f"{format_relative(check.worst_case)} off at worst"
    )
    return Relaxation(limit.text, advice, plan, evaluation, proved=False)


def _without(scenario: Scenario, requirement: Requirement) -> Scenario:
    peripherals = []
    for peripheral in scenario.peripherals:
        kept = tuple(r for r in peripheral.requirements if r != requirement)
        if kept:
            peripherals.append(replace(peripheral, requirements=kept))
    return replace(scenario, peripherals=tuple(peripherals))


def _plan(handles: ClockModel, solver: cp_model.CpSolver) -> Plan:
    """The solution's plan, each rate's own settings settled for its clock."""
    tree = handles.read_tree(solver)
    return Plan(
        tree.sources,
        {**tree.settings, **settle_settings(handles.scenario, tree.clocks, tree.roots)},
    )


def _advice(limit: Limit, evaluation: Evaluation) -> str:
    requirement = limit.requirement
    if requirement is not None:
        check = next(c for c in evaluation.checks if c.requirement == requirement)
        if isinstance(requirement, ToleranceRate):
            return _allowance_advice(check, requirement.allowance_of(check.option))
    if evaluation.violations:
        return "a plan exists where " + "; ".join(evaluation.violations)
    failing = [check for check in evaluation.checks if not check.passes]
    if failing:
        return "a plan exists, but it fails " + ", ".join(c.requirement.peripheral for c in failing)
    return "a plan exists without this limit"


def _allowance_advice(check: RateCheck, allowance: Fraction) -> str:
    requirement = check.requirement
    label = f"{requirement.peripheral} ({requirement.label})"
    advice = (
        f"allow {format_relative(check.worst_case)} on {label} instead of "
        f"{format_relative(allowance)}"
    )
    room = (allowance - abs(check.error)) / (1 + check.error)
    if room > 0:
        advice += (
            f", or choose a source with a budget of at most {format_relative(room)} "
            f"({check.source} has {format_relative(check.source_budget)})"
        )
    return advice
