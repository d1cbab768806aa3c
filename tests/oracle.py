"""Brute-force oracle: enumerate every setting of a small scenario with plain loops.

No CP-SAT and no code from ``clockplan.solve``: frequencies are walked with
``Fraction`` here, so the solver's optimum can be checked against exhaustion.
"""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

from clockplan.scenario import Scenario

SHARE_STEPS = 10_000  # the objective's documented resolution (README, "How plans are ranked")


def rate_key(error: Fraction, budget: Fraction, allowance: Fraction, precision: int) -> int:
    """Share of allowance in 1/10 000 steps, the synthesis error rounded up to 10**-precision."""
    power = 10**precision
    rounded = Fraction(math.ceil(abs(error) * power), power)
    return math.ceil(SHARE_STEPS * (rounded + budget) / allowance)


def best_key(scenario: Scenario, precision: int | dict[str, int]) -> tuple[int, Fraction] | None:
    """The smallest worst-share key over every plan, and the smallest exact worst share."""
    choices: list[tuple[str, list[object]]] = []
    for source in scenario.sources:
        choices.append((source.name, list(source.candidates)))
    for pll in scenario.plls:
        choices.append((pll.name + ".m", list(pll.reference_divider)))
        choices.append((pll.name + ".n", list(pll.multiplier)))
        choices.append((pll.name + ".k", list(range(2**pll.fraction_bits))))
    for divider in scenario.dividers:
        choices.append((divider.name, list(divider.divide)))
    for mux in scenario.muxes:
        choices.append((mux.name, list(mux.inputs)))
    names = [name for name, _ in choices]
    best: tuple[int, Fraction] | None = None
    for combo in itertools.product(*(values for _, values in choices)):
        setting = dict(zip(names, combo, strict=True))
        walked = _walk(scenario, setting)
        if walked is None:
            continue
        clocks, roots = walked
        key, share = 0, Fraction(0)
        for peripheral in scenario.peripherals:
            kernel = clocks[peripheral.clock]
            budget = scenario.source(roots[peripheral.clock]).budget
            for requirement in peripheral.requirements:
                if requirement.ceiling:
                    if not _ceiling_met(requirement, kernel, budget):
                        key = -1
                        break
                    continue
                options = [
                    (requirement.achieved(kernel, d) / requirement.target - 1, option.allowance)
                    for option in requirement.choices
                    for d in _divisors(requirement, option)
                ]
                feasible = [(e, a) for e, a in options if abs(e) + budget <= a]
                if not feasible:
                    key = -1
                    break
                keys = [
                    (rate_key(e, budget, a, _digits(precision, requirement)), (abs(e) + budget) / a)
                    for e, a in feasible
                ]
                best_rate = min(keys)
                key = max(key, best_rate[0])
                share = max(share, best_rate[1])
            if key < 0:
                break
        if key < 0:
            continue
        if best is None or (key, share) < best:
            best = (key, share)
    return best


def _digits(precision: int | dict[str, int], requirement) -> int:  # type: ignore[no-untyped-def]
    """The rounding the solver used for this rate (one figure for all, or per rate)."""
    return precision if isinstance(precision, int) else precision[requirement.setting]


def _divisors(requirement, option):  # type: ignore[no-untyped-def]
    """Every divisor an option allows: its own set, or every product of the named stages."""
    if requirement.stages:
        return {
            math.prod(combo) for combo in itertools.product(*(v for _, v in requirement.stages))
        }
    return option.divisors


def _ceiling_met(requirement, kernel: Fraction, budget: Fraction) -> bool:  # type: ignore[no-untyped-def]
    """Some divisor keeps the rate at or under the maximum (and over the floor) with the budget."""
    for option in requirement.choices:
        for divisor in _divisors(requirement, option):
            rate = requirement.achieved(kernel, divisor)
            low_ok = requirement.floor is None or rate * (1 - budget) >= requirement.floor
            if rate * (1 + budget) <= requirement.target and low_ok:
                return True
    return False


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
            pfd = clocks[item.input] / setting[name + ".m"]  # type: ignore[operator]
            if not item.pfd[0] <= pfd <= item.pfd[1]:
                return None
            n = setting[name + ".n"] + Fraction(setting[name + ".k"], 2**item.fraction_bits)  # type: ignore[operator,arg-type]
            clocks[name], roots[name] = pfd * n, roots[item.input]
            if not item.vco[0] <= clocks[name] <= item.vco[1]:
                return None
        elif item in scenario.dividers:
            clocks[name], roots[name] = clocks[item.input] / setting[name], roots[item.input]  # type: ignore[operator]
            if item.minimum is not None and clocks[name] < item.minimum:
                return None
            if item.maximum is not None and clocks[name] > item.maximum:
                return None
        else:
            chosen = setting[name]
            clocks[name], roots[name] = clocks[chosen], roots[chosen]  # type: ignore[index]
            if item.maximum is not None and clocks[name] > item.maximum:
                return None
    return clocks, roots
