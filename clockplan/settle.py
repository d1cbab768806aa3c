"""Each rate's own settings, settled exactly for the clock that feeds it.

A rate's divisor (a UART's fractional divisor, a timer's prescaler × reload, a CAN bit
timing and its prescaler) touches that rate alone, so its best value follows from the
input clock without any search: the achieved rate ``input_clock × numerator / divisor`` falls
as the divisor grows, so for a rate with a tolerance the best divisor is one of the two
allowed values around the ideal one, and for a rate under a ceiling it is the smallest
allowed value that keeps the rate (plus the oscillator's budget) at or under the maximum.

"Best" is the smallest exact worst-case share of the allowance, |e| + b·(1 + e) over the
allowance a, with e the synthesis error and b the oscillator's budget; ties go to the
smaller divisor, then to the earlier option.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from clockplan.peripherals.base import (
    CeilingRate,
    Divisors,
    Options,
    Requirement,
    Stages,
    ToleranceRate,
    largest,
)
from clockplan.plan import SettingValue
from clockplan.scenario import Scenario

__all__ = ["RateSetting", "settle_rate", "settle_settings", "worst_case", "nearest_values"]

_SHORTLIST = 1e-9
"""Products whose float share is within this (relative) of the best are re-checked exactly."""


@dataclass(frozen=True)
class RateSetting:
    """The settled own settings of one rate."""

    option: int
    """Index of the chosen option in ``requirement.options``."""
    divisor: int
    """The whole divisor (the product of the stages, when the rate has stages)."""
    stages: tuple[int, ...] = ()
    """Each stage's value, in the order of the divisor's stages (a product of stages only)."""


def worst_case(error: Fraction, budget: Fraction) -> Fraction:
    """Worst relative deviation of a rate with synthesis error ``error`` from a source off by
    up to ``budget``: (1 + e)(1 ± b) − 1 at its largest, which is |e| + b·(1 + e)."""
    return abs(error) + budget * (1 + error)


def settle_settings(
    scenario: Scenario, clocks: Mapping[str, Fraction], roots: Mapping[str, str]
) -> dict[str, SettingValue]:
    """Every rate's own settings for the clocks of a plan (``roots``: each clock's source).

    A ceiling that no divisor meets (an explanation may let one go) takes its slowest
    divisor, the nearest it comes to the maximum.
    """
    settings: dict[str, SettingValue] = {}
    for peripheral in scenario.peripherals:
        input_clock = clocks[peripheral.clock]
        budget = scenario.source(roots[peripheral.clock]).budget
        for requirement in peripheral.requirements:
            chosen = settle_rate(requirement, input_clock, budget) or _slowest(requirement)
            match requirement.divisor:
                case Stages(stages):
                    for (name, _), value in zip(stages, chosen.stages, strict=True):
                        settings[requirement.stage_setting(name)] = value
                case Options(options):
                    settings[requirement.setting] = chosen.divisor
                    if len(options) > 1:
                        settings[requirement.option_setting] = chosen.option
    return settings


def _slowest(requirement: Requirement) -> RateSetting:
    match requirement.divisor:
        case Stages(stages):
            values = tuple(largest(values) for _, values in stages)
            return RateSetting(0, math.prod(values), values)
        case Options(options):
            return RateSetting(0, largest(options[0].divisors))


def settle_rate(
    requirement: Requirement, input_clock: Fraction, budget: Fraction
) -> RateSetting | None:
    """The best own settings of ``requirement`` fed by ``input_clock`` hertz from a source with
    ``budget``; None when no allowed divisor meets a ceiling (a tolerance rate always has a
    best divisor, inside its allowance or not)."""
    match requirement:
        case CeilingRate():
            return _fastest_under_ceiling(requirement, input_clock, budget)
        case ToleranceRate():
            return _nearest_in_tolerance(requirement, input_clock, budget)


def _nearest_in_tolerance(
    requirement: ToleranceRate, input_clock: Fraction, budget: Fraction
) -> RateSetting:
    """The divisor (and option) with the smallest worst-case share of the allowance."""
    ideal = input_clock * requirement.numerator / requirement.target
    best: tuple[tuple[Fraction, int, int], RateSetting] | None = None
    for index, option in enumerate(requirement.options):
        allowance = requirement.allowance_of(option)
        for divisor, stages in _around(requirement, option.divisors, ideal, budget, allowance):
            error = ideal / divisor - 1
            key = (worst_case(error, budget) / allowance, divisor, index)
            if best is None or key < best[0]:
                best = (key, RateSetting(index, divisor, stages))
    assert best is not None, "every option allows at least one divisor"
    return best[1]


def _around(
    requirement: Requirement,
    divisors: Divisors,
    ideal: Fraction,
    budget: Fraction,
    allowance: Fraction,
) -> list[tuple[int, tuple[int, ...]]]:
    """The divisors worth comparing exactly: the allowed values around ``ideal``."""
    match requirement.divisor:
        case Stages(stages):
            return _stage_candidates([values for _, values in stages], ideal, budget, allowance)
        case Options():
            return [(value, ()) for value in nearest_values(divisors, ideal)]


def nearest_values(values: Divisors, x: Fraction) -> list[int]:
    """The allowed values just below and just above ``x`` (one when ``x`` is allowed)."""
    if isinstance(values, range):
        if len(values) == 0:
            return []
        steps = (x - values.start) / values.step
        low = min(max(math.floor(steps), 0), len(values) - 1)
        high = min(max(math.ceil(steps), 0), len(values) - 1)
        return sorted({values[low], values[high]})
    position = bisect.bisect_left(values, x)
    picked = {values[min(position, len(values) - 1)], values[max(position - 1, 0)]}
    return sorted(picked)


def _stage_candidates(
    stages: Sequence[Divisors], ideal: Fraction, budget: Fraction, allowance: Fraction
) -> list[tuple[int, tuple[int, ...]]]:
    """Stage combinations whose product is among the best for ``ideal`` (float shortlist).

    Every combination of all stages but the last is tried; the last takes its two allowed
    values around what is left of ``ideal``. Floats only shortlist: the caller compares
    the shortlisted products exactly.
    """
    *others, last = stages
    heads = _combinations(others)
    if not heads:
        return []
    head_values = np.array([math.prod(head) for head in heads], dtype=np.float64)
    wanted = float(ideal) / head_values
    lows, highs = _bracket(last, wanted)
    candidates: list[tuple[int, tuple[int, ...]]] = []
    scores = []
    for tails in (lows, highs):
        products = head_values * tails
        error = float(ideal) / products - 1
        scores.append(np.abs(error) + float(budget) * (1 + error))
    score = np.minimum(scores[0], scores[1])
    best = float(np.min(score))
    keep = np.nonzero(score <= best + _SHORTLIST * max(best, float(allowance)))[0]
    for row in keep:
        for tails in (lows, highs):
            tail = int(tails[row])
            head = heads[row]
            candidates.append((math.prod(head) * tail, (*head, tail)))
    return sorted(set(candidates))


def _combinations(stages: Sequence[Divisors]) -> list[tuple[int, ...]]:
    combos: list[tuple[int, ...]] = [()]
    for values in stages:
        combos = [combo + (value,) for combo in combos for value in values]
    return combos


def _bracket(values: Divisors, wanted: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each wanted value, the allowed values just below and just above it."""
    if isinstance(values, range):
        steps = (wanted - values.start) / values.step
        count = len(values)
        low = np.clip(np.floor(steps), 0, count - 1)
        high = np.clip(np.ceil(steps), 0, count - 1)
        return values.start + values.step * low, values.start + values.step * high
    table = np.array(values, dtype=np.float64)
    position = np.searchsorted(table, wanted)
    high = table[np.clip(position, 0, len(table) - 1)]
    low = table[np.clip(position - 1, 0, len(table) - 1)]
    return low, high


def _fastest_under_ceiling(
    requirement: CeilingRate, input_clock: Fraction, budget: Fraction
) -> RateSetting | None:
    """The smallest divisor whose rate, with the budget, stays at or under the maximum (and
    at or over the floor): the fastest the ceiling allows."""
    produced = input_clock * requirement.numerator
    least = produced * (1 + budget) / requirement.maximum
    most = None
    if requirement.floor is not None:
        most = produced * (1 - budget) / requirement.floor
    best: tuple[tuple[int, int], RateSetting] | None = None
    for index, option in enumerate(requirement.options):
        found = _smallest_at_least(requirement, option.divisors, least)
        if found is None or (most is not None and found[0] > most):
            continue
        key = (found[0], index)
        if best is None or key < best[0]:
            best = (key, RateSetting(index, found[0], found[1]))
    return best[1] if best else None


def _smallest_at_least(
    requirement: Requirement, divisors: Divisors, least: Fraction
) -> tuple[int, tuple[int, ...]] | None:
    """The smallest allowed divisor (or stage product) at or above ``least``."""
    match requirement.divisor:
        case Stages(stages):
            return _smallest_product_at_least([values for _, values in stages], least)
        case Options():
            value = _first_at_least(divisors, least)
            return None if value is None else (value, ())


def _smallest_product_at_least(
    stages: Sequence[Divisors], least: Fraction
) -> tuple[int, tuple[int, ...]] | None:
    """The smallest product of one value per stage at or above ``least``."""
    *others, last = stages
    best: tuple[int, tuple[int, ...]] | None = None
    for head in _combinations(others):
        product = math.prod(head)
        tail = _first_at_least(last, least / product)
        if tail is None:
            continue
        found = (product * tail, (*head, tail))
        if best is None or found < best:
            best = found
    return best


def _first_at_least(values: Divisors, least: Fraction) -> int | None:
    if isinstance(values, range):
        if len(values) == 0 or least > values[-1]:
            return None
        steps = max(0, math.ceil((least - values.start) / values.step))
        return values[steps]
    position = bisect.bisect_left(values, least)
    return values[position] if position < len(values) else None
