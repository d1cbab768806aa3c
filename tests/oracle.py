"""Brute-force oracle: enumerate every setting of a small scenario with plain loops.

No CP-SAT and no code from ``clockplan.solve`` or ``clockplan.settle``: frequencies are
walked with ``Fraction`` here, every divisor a rate allows is tried, and the best plan is
picked by the ranking's definition as the README states it ("How plans are ranked"), so
the solver's answer can be checked against exhaustion.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from fractions import Fraction

from clockplan.peripherals.base import CeilingRate, Options, Stages, ToleranceRate
from clockplan.plan import Plan
from clockplan.scenario import Scenario

SHARE_STEPS = 10_000  # shares of an allowance in steps of 1/10 000 (README)
ERROR_STEPS = 10**9  # errors in steps of 10**-9 (README)


def error_steps(error: Fraction) -> int:
    """E: the synthesis error in steps of 10**-9, counted up to the next step."""
    return math.floor(abs(error) * ERROR_STEPS) + 1


def worst_steps(error: Fraction, budget: Fraction) -> int:
    """X: the synthesis part of the worst case, |e|·(1 ± b), in steps of 10**-9."""
    steps = error_steps(error)
    if error >= 0:
        return steps + math.ceil(Fraction(steps * math.ceil(budget * ERROR_STEPS), ERROR_STEPS))
    return steps - math.floor(Fraction(steps * math.floor(budget * ERROR_STEPS), ERROR_STEPS))


def share_steps(error: Fraction, budget: Fraction, allowance: Fraction) -> int:
    """S: the worst case as a share of the allowance, in steps of 1/10 000."""
    raised = math.ceil(budget * ERROR_STEPS)
    return math.ceil(
        SHARE_STEPS * Fraction(worst_steps(error, budget) + raised, ERROR_STEPS) / allowance
    )


def worst_case(error: Fraction, budget: Fraction) -> Fraction:
    """(1 + e)(1 ± b) − 1 at its largest."""
    return max(abs((1 + error) * (1 + budget) - 1), abs((1 + error) * (1 - budget) - 1))


@dataclass(frozen=True)
class Scored:
    """One plan with the ranking's figures."""

    plan: Plan
    key: tuple[object, ...]
    worst: int
    worst_share: Fraction


def best_plan(scenario: Scenario) -> Scored | None:
    """The best plan by the full ranking (goals in the scenario's order, then every rate's
    share, every rate's error in steps, then each exact worst case in file order, the
    smallest settings), or None when no plan fits."""
    best: Scored | None = None
    for scored in all_plans(scenario):
        if best is None or scored.key < best.key:
            best = scored
    return best


def best_key(scenario: Scenario, precision: object = None) -> tuple[int, Fraction] | None:
    """The smallest worst share in steps and the exact worst share of the best plan."""
    best = best_plan(scenario)
    return None if best is None else (best.worst, best.worst_share)


def all_plans(scenario: Scenario):  # type: ignore[no-untyped-def]
    """Every plan that meets every limit, each rate at its own best settings, scored."""
    choices: list[tuple[str, list[object]]] = []
    for source in scenario.sources:
        choices.append((source.name, list(source.candidates)))
    for pll in scenario.plls:
        choices.append((pll.name + ".reference_divider", list(pll.reference_divider)))
        choices.append((pll.name + ".multiplier", list(pll.multiplier)))
        if pll.fraction_bits:
            choices.append((pll.name + ".fraction", list(range(2**pll.fraction_bits))))
    for divider in scenario.dividers:
        choices.append((divider.name + ".divide", list(divider.divide)))
    for mux in scenario.muxes:
        choices.append((mux.name + ".input", list(mux.inputs)))
    names = [name for name, _ in choices]
    for combo in itertools.product(*(values for _, values in choices)):
        setting = dict(zip(names, combo, strict=True))
        walked = _walk(scenario, setting)
        if walked is None:
            continue
        scored = _score(scenario, setting, *walked)
        if scored is not None:
            yield scored


def _score(scenario: Scenario, setting: dict[str, object], clocks, roots):  # type: ignore[no-untyped-def]
    settings: dict[str, object] = {}
    shares, errors, exact, ceilings = [], [], [], 0
    worst_share = Fraction(0)
    used = set()
    for peripheral in scenario.peripherals:
        input_clock = clocks[peripheral.clock]
        root = roots[peripheral.clock]
        used.add(root)
        budget = scenario.source(root).budget
        for requirement in peripheral.requirements:
            found = _best_own(requirement, input_clock, budget)
            if found is None:
                return None
            index, divisor, stages, achieved = found
            match requirement.divisor:
                case Stages(stages=named):
                    for (name, _), value in zip(named, stages, strict=True):
                        settings[f"{requirement.setting}.{name}"] = value
                case Options(options):
                    settings[requirement.setting] = divisor
                    if len(options) > 1:
                        settings[requirement.option_setting] = index
            if isinstance(requirement, CeilingRate):
                ceilings += math.floor(achieved)
                continue
            error = achieved / requirement.target - 1
            allowance = requirement.allowance_of(requirement.options[index])
            shares.append(share_steps(error, budget, allowance))
            errors.append(worst_steps(error, budget))
            exact.append(worst_case(error, budget))
            worst_share = max(worst_share, worst_case(error, budget) / allowance)
    fastest = 0
    for divider in scenario.dividers:
        if divider.fastest:
            fastest += math.floor(clocks[divider.name])
            used.add(roots[divider.name])
    cost = sum((scenario.source(name).cost or 0 for name in used), Fraction(0))
    worst = max(shares, default=0)
    goals = {"worst-share": worst, "cost": cost, "fastest": -fastest, "ceilings": -ceilings}
    order = []
    for source in scenario.sources:
        if len(source.candidates) > 1:
            order.append(source.candidates.index(setting[source.name]))
    for pll in scenario.plls:
        order.append(setting[pll.name + ".reference_divider"])
        order.append(setting[pll.name + ".multiplier"])
        if pll.fraction_bits:
            order.append(setting[pll.name + ".fraction"])
    for divider in scenario.dividers:
        order.append(setting[divider.name + ".divide"])
    for mux in scenario.muxes:
        order.append(mux.inputs.index(setting[mux.name + ".input"]))
    goal_keys = (goals[goal] for goal in scenario.rank_by)
    key = (*goal_keys, sum(shares), sum(errors), tuple(exact), tuple(order))
    sources = {s.name: setting[s.name] for s in scenario.sources}
    tree = {k: v for k, v in setting.items() if "." in k}
    plan = Plan(sources, {**tree, **settings})  # type: ignore[arg-type]
    return Scored(plan, key, worst, worst_share)


def _best_own(requirement, input_clock: Fraction, budget: Fraction):  # type: ignore[no-untyped-def]
    """The rate's own settings: every option and divisor tried; the smallest exact worst-case
    share wins (ties: smaller divisor, earlier option); a ceiling takes its fastest."""
    best = None
    for index, option in enumerate(requirement.options):
        for divisor, stages in _divisors(requirement, option):
            achieved = requirement.achieved(input_clock, divisor)
            match requirement:
                case CeilingRate(maximum=maximum, floor=floor):
                    fits = achieved * (1 + budget) <= maximum and (
                        floor is None or achieved * (1 - budget) >= floor
                    )
                    if not fits:
                        continue
                    key = (divisor, index, stages)
                case ToleranceRate(target=target):
                    allowance = requirement.allowance_of(option)
                    error = achieved / target - 1
                    if worst_case(error, budget) > allowance:
                        continue
                    key = (worst_case(error, budget) / allowance, divisor, index, stages)
            if best is None or key < best[0]:
                best = (key, (index, divisor, stages, achieved))
    return None if best is None else best[1]


def _divisors(requirement, option):  # type: ignore[no-untyped-def]
    """Every divisor an option allows, with the stage values that make it."""
    if isinstance(requirement.divisor, Stages):
        for combo in itertools.product(*requirement.divisor.value_sets):
            yield math.prod(combo), combo
        return
    for value in option.divisors:
        yield value, ()


def _walk(scenario: Scenario, setting: dict[str, object]):  # type: ignore[no-untyped-def]
    clocks: dict[str, Fraction] = {}
    roots: dict[str, str] = {}
    pending = [*scenario.sources, *scenario.plls, *scenario.dividers, *scenario.muxes]
    while pending:
        item = pending.pop(0)
        name = item.name
        feeds = getattr(item, "inputs", None) or [getattr(item, "input", None)]
        if any(feed is not None and feed not in clocks for feed in feeds):
            pending.append(item)
            continue
        if item in scenario.sources:
            clocks[name], roots[name] = setting[name], name  # type: ignore[assignment]
        elif item in scenario.plls:
            pfd = clocks[item.input] / setting[name + ".reference_divider"]  # type: ignore[operator]
            if not item.pfd[0] <= pfd <= item.pfd[1]:
                return None
            fraction = setting.get(name + ".fraction", 0)
            n = setting[name + ".multiplier"] + Fraction(fraction, 2**item.fraction_bits)  # type: ignore[operator,arg-type]
            clocks[name], roots[name] = pfd * n, roots[item.input]
            if not item.vco[0] <= clocks[name] <= item.vco[1]:
                return None
        elif item in scenario.dividers:
            clocks[name] = clocks[item.input] / setting[name + ".divide"]  # type: ignore[operator]
            roots[name] = roots[item.input]
            if item.minimum is not None and clocks[name] < item.minimum:
                return None
            if item.maximum is not None and clocks[name] > item.maximum:
                return None
        else:
            chosen = setting[name + ".input"]
            clocks[name], roots[name] = clocks[chosen], roots[chosen]  # type: ignore[index]
            if item.maximum is not None and clocks[name] > item.maximum:
                return None
    return clocks, roots
