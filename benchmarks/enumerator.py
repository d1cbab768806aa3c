"""A brute-force enumerator of clock plans, vectorised with numpy: the benchmark's yardstick.

It shares no code with :mod:`clockplan.solve`. Every combination of the tree's settings is
visited in evaluation order: each source's candidates, each PLL's reference divider ×
multiplier × fraction (all ``2**bits`` values), each divider's values and each mux's
inputs. Combinations are expanded depth first in blocks of at most ``BLOCK_ROWS`` rows, so
memory stays bounded however large the space is.

Limits prune as they become known. A setting's allowed values are sorted, so the PFD, VCO
and min/max limits turn into an interval of allowed indices per row; only the indices
inside it are generated, and the rest are counted as checked (they are ruled out whole).
As soon as a peripheral's input clock is known, each of its rates is scored:

* the best divisor follows analytically from the ideal divisor ``x = input_clock·numerator /
  target``: the nearest allowed values below and above ``x`` (a range: round and clip; a
  tuple: ``np.searchsorted``); for options, each option in turn;
* a divisor that is a product of named stages **enumerates** the distinct products when
  the stages have at most ``STAGE_PRODUCTS`` raw combinations, and is then searched like a
  tuple; a larger one keeps its largest stage as a range and enumerates the products of
  the others (at most ``STAGE_PRODUCTS`` of them, else ``ModelTooLargeError``): the
  nearest reachable whole numbers are found by walking out from ``x`` with a complete
  factor test (trial division up to √n), and rows still unsettled after ``_WALK`` steps
  search every product of the others;
* each rate is scored once per distinct input clock (and source) in a block;
* a rate that no divisor keeps inside its allowance (or a ceiling that no divisor meets)
  rules the row out.

Float keys only shortlist. Each rate's key is a lower bound of the exact key (the
synthesis error is lowered by ``FLOAT_SLACK`` before rounding up), so a combination whose
float key is at or above the best exact key cannot beat it. Those below it are re-checked,
lowest first, with ``Fraction`` arithmetic: divisors chosen exactly, the plan recomputed
by :func:`clockplan.evaluate.evaluate_plan`, and the key taken from its exact errors by
:func:`rate_key` (the worst case |e| + b(1 + e) in the search's steps), the plan's key the
maximum. No bound on the objective prunes: every combination that meets
every limit and allowance is scored. At most ``RECHECK_CAP`` re-checks are made; when the
cap stops them the result says so (``capped``) and its optimum is not proved.

Past its time cap the enumerator stops and reports how many combinations it checked per
second and how long the whole space would take (projected from the share of the walk done).
"""

from __future__ import annotations

import bisect
import itertools
import math
import time
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from clockplan.errors import ModelTooLargeError
from clockplan.evaluate import Evaluation, evaluate_plan
from clockplan.peripherals.base import (
    CeilingRate,
    Divisors,
    Option,
    Options,
    Requirement,
    Stages,
    ToleranceRate,
)
from clockplan.plan import Plan, SettingValue, pll_keys
from clockplan.scenario import Scenario
from clockplan.topology import evaluation_order

__all__ = [
    "Enumeration",
    "enumerate_plans",
    "raw_combinations",
    "tree_combinations",
    "exact_key",
    "SHARE_STEPS",
    "BLOCK_ROWS",
    "STAGE_PRODUCTS",
    "RECHECK_CAP",
]

SHARE_STEPS = 10_000
"""The objective counts the worst share of an allowance in steps of 1/10 000 (README)."""
ERROR_STEPS = 10**9
"""Errors count in steps of 10**-9 (README)."""
BLOCK_ROWS = 1 << 16
"""Most combinations held in one block of arrays."""
STAGE_PRODUCTS = 1 << 16
"""Most products of stages enumerated for one requirement (see the module docstring)."""
RECHECK_CAP = 20_000
"""Most combinations re-checked exactly in one run."""
FLOAT_SLACK = 1e-12
"""Relative (and, for errors, absolute) room left for float rounding: keys stay lower bounds."""
_WALK = 16
"""Whole numbers tried on each side of the ideal divisor before a full search of products."""
_QUICK = 8
"""Smallest values of each side of a stage product tried before a full factor test."""
_MATRIX_ELEMENTS = 1 << 22
"""Most elements of one rows × products block in the large-stage search."""


@dataclass(frozen=True)
class Enumeration:
    """What the enumerator found and how fast it went."""

    finished: bool
    """Whether every combination was checked before the time cap."""
    best_key: int | None
    """Smallest worst-share key found (None: no feasible plan, or none found before the cap)."""
    best_plan: Plan | None
    checked: int
    """Combinations of the tree's settings checked (those ruled out whole by a limit count)."""
    total: int
    """Combinations of the tree's settings in the whole space."""
    elapsed: float
    """Seconds spent."""
    projected: float
    """Seconds the whole space takes: ``elapsed`` when finished, else ``elapsed / progress``.

    The progress is the share of the depth-first walk done, each block of rows counted as
    an equal share of its parent's work. ``total / rate`` would flatter the enumerator: a
    limit rules out huge subtrees at once early on, while the combinations that pass every
    limit, the costly ones, come later.
    """
    rechecked: int = 0
    """Combinations re-checked exactly."""
    capped: bool = False
    """Whether RECHECK_CAP stopped the exact re-checks (the optimum is then not proved)."""

    @property
    def rate(self) -> float:
        """Combinations checked per second."""
        return self.checked / self.elapsed if self.elapsed > 0 else math.inf


# -- counting the space ---------------------------------------------------------------------


def tree_combinations(scenario: Scenario) -> int:
    """Combinations of the tree's settings: sources, PLLs, dividers and muxes."""
    counts = [len(source.candidates) for source in scenario.sources]
    for pll in scenario.plls:
        counts += [len(pll.reference_divider), len(pll.multiplier), 2**pll.fraction_bits]
    counts += [len(divider.divide) for divider in scenario.dividers]
    counts += [len(mux.inputs) for mux in scenario.muxes]
    return math.prod(counts)


def raw_combinations(scenario: Scenario) -> int:
    """The raw search space: the tree's combinations × every requirement's divisor count.

    A requirement with options counts the union of their divisors; one with stages counts
    the product of the stages' sizes.
    """
    counts = [
        _divisor_count(requirement)
        for peripheral in scenario.peripherals
        for requirement in peripheral.requirements
    ]
    return tree_combinations(scenario) * math.prod(counts)


def _divisor_count(requirement: Requirement) -> int:
    if isinstance(requirement.divisor, Stages):
        return math.prod(len(values) for values in requirement.divisor.value_sets)
    sets = list(requirement.divisor.value_sets)
    if len(sets) == 1:
        return len(sets[0])
    if all(isinstance(values, range) and values.step == 1 for values in sets):
        return _merged_length(sorted((values.start, values.stop) for values in sets))  # type: ignore[union-attr]
    return len(np.unique(np.concatenate([np.asarray(values, dtype=np.int64) for values in sets])))


def _merged_length(spans: list[tuple[int, int]]) -> int:
    """Length of the union of half-open spans sorted by start."""
    total, reach = 0, None
    for start, stop in spans:
        if reach is None or start > reach:
            total += stop - start
            reach = stop
        elif stop > reach:
            total += stop - reach
            reach = stop
    return total


# -- allowed values as sorted axes ----------------------------------------------------------


@dataclass(frozen=True)
class _Axis:
    """A sorted set of allowed whole values, mapped from and to indices with numpy."""

    start: int
    step: int
    size: int
    table: np.ndarray | None = None
    """The values when they are no range (sorted), else None."""

    @staticmethod
    def of(values: Divisors) -> _Axis:
        if isinstance(values, range):
            return _Axis(values.start, values.step, len(values))
        table = np.asarray(values, dtype=np.float64)
        return _Axis(0, 1, len(values), table)

    def value(self, index: np.ndarray) -> np.ndarray:
        """The values at these indices, as floats."""
        if self.table is not None:
            return self.table[index]
        return self.start + self.step * index.astype(np.float64)

    def interval(self, low: np.ndarray, high: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """First and last index of the values inside [low, high] (last < first: none)."""
        if self.table is not None:
            first = np.searchsorted(self.table, low, side="left")
            last = np.searchsorted(self.table, high, side="right") - 1
        else:
            with np.errstate(invalid="ignore", over="ignore"):
                first = np.ceil((low - self.start) / self.step)
                last = np.floor((high - self.start) / self.step)
            first = np.clip(np.nan_to_num(first, nan=0.0, posinf=self.size), 0, self.size)
            last = np.clip(np.nan_to_num(last, nan=-1.0, neginf=-1.0), -1, self.size - 1)
        return first.astype(np.int64), last.astype(np.int64)

    def bracket(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The nearest values at or below x and above x (clipped to the ends)."""
        if self.table is not None:
            above = np.searchsorted(self.table, x, side="right")
            below = np.clip(above - 1, 0, self.size - 1)
            return self.table[below], self.table[np.clip(above, 0, self.size - 1)]
        with np.errstate(invalid="ignore", over="ignore"):
            index = np.floor((x - self.start) / self.step)
        index = np.clip(np.nan_to_num(index, nan=0.0), -1, self.size - 1)
        below = np.clip(index, 0, self.size - 1)
        above = np.clip(index + 1, 0, self.size - 1)
        return self.start + self.step * below, self.start + self.step * above

    def at_least(self, y: np.ndarray) -> np.ndarray:
        """The smallest value at or above y; NaN where none is."""
        first, _ = self.interval(y, np.full_like(y, np.inf))
        found = first < self.size
        result = np.full(y.shape, np.nan)
        result[found] = self.value(first[found])
        return result

    def contains(self, q: np.ndarray) -> np.ndarray:
        """Whether each whole number q is an allowed value."""
        if self.table is not None:
            index = np.clip(np.searchsorted(self.table, q), 0, self.size - 1)
            return self.table[index] == q
        offset = q - self.start
        last = self.step * (self.size - 1)
        return (offset >= 0) & (offset <= last) & (np.mod(offset, self.step) == 0)


class _Stages:
    """A divisor that is the product of named stages (a timer's prescaler × reload).

    With at most STAGE_PRODUCTS raw combinations the distinct products are enumerated and
    searched like a tuple. Otherwise the largest stage stays a range (``spread``) and the
    products of the others (``others``) are enumerated; a whole number ``n`` is reachable
    when some factor pair ``n = a·b`` (trial division up to √n) has one side in ``others``
    and the other in ``spread``. The nearest reachable numbers are found by walking out
    from the ideal divisor (at most ``_WALK`` steps); rows still unsettled then search
    every product of ``others``.
    """

    def __init__(self, stages: Sequence[tuple[str, Divisors]]) -> None:
        sizes = [len(values) for _, values in stages]
        self.small: _Axis | None = None
        if math.prod(sizes) <= STAGE_PRODUCTS:
            self.factors = _products(stages)
            table = np.array(sorted(self.factors), dtype=np.float64)
            self.small = _Axis(0, 1, len(table), table)
            return
        self.largest = max(range(len(stages)), key=lambda position: sizes[position])
        self.spread_values = stages[self.largest][1]
        rest = [stage for position, stage in enumerate(stages) if position != self.largest]
        if math.prod(len(values) for _, values in rest) > STAGE_PRODUCTS:
            raise ModelTooLargeError(
                f"the enumerator cannot split a divisor of {len(stages)} stages: the products "
                f"of the stages beside the largest exceed {STAGE_PRODUCTS}"
            )
        self.factors = _products(rest)
        if len(rest) == 1:
            self.others = _Axis.of(rest[0][1])
        else:
            table = np.array(sorted(self.factors), dtype=np.float64)
            self.others = _Axis(0, 1, len(table), table)
        self.spread = _Axis.of(self.spread_values)

    # -- float, vectorised --------------------------------------------------------------------

    def bracket(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The largest product at or below x and the smallest above it (clipped)."""
        if self.small is not None:
            return self.small.bracket(x)
        whole = np.floor(x)
        below, above = self._walk(whole, -1), self._walk(whole + 1, 1)
        missing = np.flatnonzero(np.isnan(below) | np.isnan(above))
        if len(missing):
            low, high = self._search(x[missing])
            below[missing] = np.where(np.isnan(below[missing]), low, below[missing])
            above[missing] = np.where(np.isnan(above[missing]), high, above[missing])
        return below, above

    def at_least(self, y: np.ndarray) -> np.ndarray:
        """The smallest product at or above y; NaN where none is."""
        if self.small is not None:
            return self.small.at_least(y)
        result = self._walk(np.ceil(y), 1)
        missing = np.flatnonzero(np.isnan(result))
        if len(missing):
            _, high = self._search(y[missing])
            result[missing] = np.where(high >= y[missing], high, np.nan)
        return result

    def _walk(self, start: np.ndarray, direction: int) -> np.ndarray:
        """The first reachable whole number from ``start`` in ``direction``; NaN if not near."""
        result = np.full(start.shape, np.nan)
        pending = np.arange(len(start))
        for step in range(_WALK):
            number = start[pending] + direction * step
            hit = self._reachable(number)
            result[pending[hit]] = number[hit]
            pending = pending[~hit]
            if not len(pending):
                break
        return result

    def _reachable(self, number: np.ndarray) -> np.ndarray:
        """Whether each whole number is a product of the stages (a complete factor test).

        The first few values of each side settle most numbers at once; the rest go through
        trial division up to √n.
        """
        reached = np.zeros(number.shape, dtype=bool)
        for side, other in ((self.others, self.spread), (self.spread, self.others)):
            for value in side.value(np.arange(min(_QUICK, side.size))):
                quotient = number / value
                reached |= (quotient == np.floor(quotient)) & other.contains(quotient)
        valid = np.flatnonzero(~reached & (number >= 1))
        if not len(valid):
            return reached
        top = math.isqrt(int(number[valid].max())) + 1
        trial = np.arange(1, top + 1, dtype=np.float64)
        trial_other, trial_spread = self.others.contains(trial), self.spread.contains(trial)
        height = max(1, _MATRIX_ELEMENTS // top)
        for first in range(0, len(valid), height):
            rows = valid[first : first + height]
            quotient = number[rows, None] / trial[None, :]
            pair = quotient == np.floor(quotient)
            pair &= (trial_other[None, :] & self.spread.contains(quotient)) | (
                trial_spread[None, :] & self.others.contains(quotient)
            )
            reached[rows] = pair.any(axis=1)
        return reached

    def _search(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Largest product ≤ x and smallest ≥ x over every product (clipped to the ends)."""
        below = np.full(x.shape, -np.inf)
        above = np.full(x.shape, np.inf)
        products = self.others.value(np.arange(self.others.size))
        width = max(1, _MATRIX_ELEMENTS // max(1, len(x)))
        for first in range(0, len(products), width):
            part = products[first : first + width][None, :]
            low, high = self.spread.bracket(x[:, None] / part)
            low, high = low * part, high * part
            below = np.maximum(below, np.where(low <= x[:, None], low, -np.inf).max(axis=1))
            above = np.minimum(above, np.where(high >= x[:, None], high, np.inf).min(axis=1))
        ends = self.spread.value(np.array([0, self.spread.size - 1]))
        below = np.where(np.isfinite(below), below, products[0] * ends[0])
        above = np.where(np.isfinite(above), above, products[-1] * ends[1])
        return below, above

    # -- exact ------------------------------------------------------------------------------

    def nearest(self, x: Fraction) -> tuple[_Factored | None, _Factored | None]:
        """The largest product ≤ x and the smallest ≥ x, exactly, each with its stage values."""
        if self.small is not None:
            keys = sorted(self.factors)
            position = bisect.bisect_right(keys, x)
            below = keys[position - 1] if position else None
            position = bisect.bisect_left(keys, x)
            above = keys[position] if position < len(keys) else None
            return (
                None if below is None else (below, self.factors[below]),
                None if above is None else (above, self.factors[above]),
            )
        low, high = math.floor(x), math.ceil(x)
        below = above = None
        for step in range(_WALK):
            below = below or self._factor(low - step)
            above = above or self._factor(high + step)
        if below is None or above is None:
            searched = self._search_exact(x)
            below, above = below or searched[0], above or searched[1]
        return below, above

    def _factor(self, number: int) -> _Factored | None:
        """``number`` with its stage values when it is a product of the stages."""
        if number < 1:
            return None
        for low in range(1, math.isqrt(number) + 1):
            if number % low:
                continue
            for other, spread in ((low, number // low), (number // low, low)):
                if other in self.factors and spread in self.spread_values:
                    return number, self._stage_values(other, spread)
        return None

    def _search_exact(self, x: Fraction) -> tuple[_Factored | None, _Factored | None]:
        below: _Factored | None = None
        above: _Factored | None = None
        for product in self.factors:
            low, high = _nearest(self.spread_values, x / product)
            if low is not None and (below is None or product * low > below[0]):
                below = product * low, self._stage_values(product, low)
            if high is not None and (above is None or product * high < above[0]):
                above = product * high, self._stage_values(product, high)
        return below, above

    def _stage_values(self, other: int, spread: int) -> tuple[int, ...]:
        values = list(self.factors[other])
        values.insert(self.largest, spread)
        return tuple(values)


_Factored = tuple[int, tuple[int, ...]]
"""A divisor with the stage values that make it."""


def _products(stages: Sequence[tuple[str, Divisors]]) -> dict[int, tuple[int, ...]]:
    """Every distinct product of the stages, each with the first stage values that make it."""
    found: dict[int, tuple[int, ...]] = {}
    for values in itertools.product(*(values for _, values in stages)):
        found.setdefault(math.prod(values), values)
    return found


# -- the rates ------------------------------------------------------------------------------


@dataclass
class _Rate:
    """One requirement, prepared for vectorised scoring."""

    requirement: Requirement
    node: str
    ways: list[tuple[_Axis | _Stages, Option]]
    """Each option's divisors, with the option."""

    @staticmethod
    def of(requirement: Requirement, node: str) -> _Rate:
        match requirement.divisor:
            case Stages(stages):
                ways: list[tuple[_Axis | _Stages, Option]] = [
                    (_Stages(stages), requirement.divisor.options[0])
                ]
            case Options(options):
                ways = [(_Axis.of(option.divisors), option) for option in options]
        return _Rate(requirement, node, ways)

    def keys(self, input_clock: np.ndarray, budget: np.ndarray | float) -> np.ndarray:
        """A lower bound of the rate's exact key per row; +inf where no divisor can serve."""
        requirement = self.requirement
        ideal = input_clock * (requirement.numerator / float(requirement.nominal))
        match requirement:
            case CeilingRate():
                return self._ceiling(requirement, ideal, input_clock, budget)
            case ToleranceRate():
                return self._tolerance(requirement, ideal, budget)

    def _tolerance(
        self, requirement: ToleranceRate, ideal: np.ndarray, budget: np.ndarray | float
    ) -> np.ndarray:
        """The least key any divisor of any option reaches within its allowance."""
        best = np.full(ideal.shape, np.inf)
        for divisors, option in self.ways:
            allowance = float(requirement.allowance_of(option))
            for divisor in divisors.bracket(ideal):
                signed = ideal / divisor - 1
                error = np.maximum(np.abs(signed) - FLOAT_SLACK, 0)
                worst = error * (1 + np.sign(signed) * budget) + budget
                fits = worst <= allowance * (1 + FLOAT_SLACK)
                # the key's own rounding: E = ⌊10⁹·|e|⌋ + 1, then X ≥ E·(1 ± b)
                steps = np.floor(error * ERROR_STEPS) + 1
                part = steps * (1 + np.sign(signed) * budget) * (1 - FLOAT_SLACK)
                lowest = (part + budget * ERROR_STEPS * (1 - FLOAT_SLACK)) / ERROR_STEPS
                key = np.ceil(SHARE_STEPS * lowest / allowance * (1 - FLOAT_SLACK))
                best = np.minimum(best, np.where(fits, key, np.inf))
        return best

    def _ceiling(
        self,
        requirement: CeilingRate,
        ideal: np.ndarray,
        input_clock: np.ndarray,
        budget: np.ndarray | float,
    ) -> np.ndarray:
        """0 where some divisor may keep the rate under the maximum (and over the floor)."""
        fits = np.zeros(input_clock.shape, dtype=bool)
        for divisors, _ in self.ways:
            divisor = divisors.at_least(ideal * (1 + budget) * (1 - FLOAT_SLACK))
            found = ~np.isnan(divisor)
            if requirement.floor is not None:
                rate = input_clock * requirement.numerator / np.where(found, divisor, 1)
                slowest = rate * (1 - budget)
                found &= slowest >= float(requirement.floor) * (1 - FLOAT_SLACK)
            fits |= found
        return np.where(fits, 0.0, np.inf)


# -- the levels of the enumeration -----------------------------------------------------------


@dataclass
class _Level:
    """One setting of the tree: its allowed values and what it computes."""

    name: str
    node: str
    kind: str
    """"source", "reference", "whole", "fraction", "divider" or "mux"."""
    axis: _Axis
    rates: list[_Rate] = field(default_factory=list)
    """Rates whose input clock this level completes."""


class _Enumerator:
    def __init__(self, scenario: Scenario, cap: float) -> None:
        self.scenario = scenario
        self.sources = {source.name: index for index, source in enumerate(scenario.sources)}
        self.budgets = np.array([float(source.budget) for source in scenario.sources])
        self.plls = {pll.name: pll for pll in scenario.plls}
        self.dividers = {divider.name: divider for divider in scenario.dividers}
        self.muxes = {mux.name: mux for mux in scenario.muxes}
        self.levels = self._levels()
        self.stage_sets = {
            rate.requirement.setting: rate.ways[0][0]
            for level in self.levels
            for rate in level.rates
            if isinstance(rate.ways[0][0], _Stages)
        }
        counts = [level.axis.size for level in self.levels]
        self.weights = [math.prod(counts[position + 1 :]) for position in range(len(counts))]
        self.total = math.prod(counts)
        self.started = time.monotonic()
        self.deadline = self.started + cap
        self.stopped = False
        self.path: list[list[int]] = []
        """Blocks done and blocks in all, per level of the walk (for the projection)."""
        self.reached = 0.0
        """Share of the walk done when the time cap stopped it."""
        self.checked = 0
        self.rechecked = 0
        self.capped = False
        self.best_key: int | None = None
        self.best_plan: Plan | None = None

    def _levels(self) -> list[_Level]:
        levels: list[_Level] = []
        for name in evaluation_order(self.scenario):
            if name in self.sources:
                candidates = self.scenario.source(name).candidates
                axis = _Axis(0, 1, len(candidates), np.array([float(c) for c in candidates]))
                levels.append(_Level(name, name, "source", axis))
            elif name in self.plls:
                pll = self.plls[name]
                reference, whole, fraction = pll_keys(name)
                levels.append(_Level(reference, name, "reference", _Axis.of(pll.reference_divider)))
                levels.append(_Level(whole, name, "whole", _Axis.of(pll.multiplier)))
                if pll.fraction_bits:
                    levels.append(
                        _Level(fraction, name, "fraction", _Axis(0, 1, 2**pll.fraction_bits))
                    )
            elif name in self.dividers:
                axis = _Axis.of(self.dividers[name].divide)
                levels.append(_Level(f"{name}.divide", name, "divider", axis))
            else:
                axis = _Axis(0, 1, len(self.muxes[name].inputs))
                levels.append(_Level(f"{name}.input", name, "mux", axis))
        closing = {level.node: level for level in levels}
        for peripheral in self.scenario.peripherals:
            for requirement in peripheral.requirements:
                closing[peripheral.clock].rates.append(_Rate.of(requirement, peripheral.clock))
        return levels

    # -- walking ------------------------------------------------------------------------------

    def run(self) -> Enumeration:
        self._descend({"key": np.zeros(1)}, 0)
        elapsed = time.monotonic() - self.started
        finished = not self.stopped
        progress = 1.0 if finished else self.reached
        projected = elapsed / progress if progress > 0 else math.inf
        return Enumeration(
            finished,
            self.best_key,
            self.best_plan,
            self.checked,
            self.total,
            elapsed,
            projected,
            self.rechecked,
            self.capped,
        )

    def _descend(self, rows: dict[str, np.ndarray], position: int) -> None:
        if self.stopped:
            return
        if time.monotonic() > self.deadline:
            self.stopped = True
            self.reached = self.progress()
            return
        if position == len(self.levels):
            self.checked += len(rows["key"])
            self._shortlist(rows)
            return
        level = self.levels[position]
        first, last = self._interval(level, rows)
        counts = np.maximum(last - first + 1, 0)
        self.checked += int(level.axis.size * len(counts) - counts.sum()) * self.weights[position]
        blocks = list(_blocks(first, counts))
        self.path.append([0, len(blocks)])
        for block, start, size in blocks:
            if self.stopped:
                return
            expanded = {name: np.repeat(column[block], size) for name, column in rows.items()}
            offsets = np.arange(int(size.sum())) - np.repeat(np.cumsum(size) - size, size)
            index = np.repeat(start, size) + offsets
            expanded[level.name] = index
            kept = self._compute(level, expanded)
            self.checked += (len(index) - len(kept["key"])) * self.weights[position]
            if len(kept["key"]):
                self._descend(kept, position + 1)
            if not self.stopped:
                self.path[-1][0] += 1
        self.path.pop()

    def progress(self) -> float:
        """Share of the depth-first walk done, counting sibling blocks as equal shares."""
        done, share = 0.0, 1.0
        for finished, count in self.path:
            if count:
                done += share * finished / count
                share /= count
        return done

    def _interval(
        self, level: _Level, rows: dict[str, np.ndarray]
    ) -> tuple[np.ndarray, np.ndarray]:
        """Indices of the level's values that its limits allow, per row."""
        size = len(rows["key"])
        everything = np.zeros(size, dtype=np.int64), np.full(size, level.axis.size - 1)
        wide = 1 + FLOAT_SLACK
        if level.kind == "reference":
            pll = self.plls[level.node]
            incoming = rows["hz:" + pll.input]
            low_pfd, high_pfd = float(pll.pfd[0]), float(pll.pfd[1])
            with np.errstate(divide="ignore"):
                high = incoming / low_pfd * wide if low_pfd > 0 else np.full(size, np.inf)
            return level.axis.interval(incoming / high_pfd / wide, high)
        if level.kind == "whole":
            pll = self.plls[level.node]
            detector = rows["pfd:" + pll.name]
            reach = 1 - 2.0**-pll.fraction_bits if pll.fraction_bits else 0.0
            low = float(pll.vco[0]) / detector / wide - reach
            return level.axis.interval(low, float(pll.vco[1]) / detector * wide)
        if level.kind == "fraction":
            pll = self.plls[level.node]
            detector = rows["pfd:" + pll.name]
            whole = self._value(f"{pll.name}.multiplier", rows)
            modulus = 2.0**pll.fraction_bits
            low = (float(pll.vco[0]) / detector / wide - whole) * modulus
            high = (float(pll.vco[1]) / detector * wide - whole) * modulus
            return level.axis.interval(low, high)
        if level.kind == "divider":
            divider = self.dividers[level.node]
            if divider.minimum is None and divider.maximum is None:
                return everything
            incoming = rows["hz:" + divider.input]
            low = (
                incoming / float(divider.maximum) / wide
                if divider.maximum is not None
                else np.zeros(size)
            )
            high = (
                incoming / float(divider.minimum) * wide
                if divider.minimum
                else np.full(size, np.inf)
            )
            return level.axis.interval(low, high)
        return everything

    def _value(self, name: str, rows: dict[str, np.ndarray]) -> np.ndarray:
        level = next(level for level in self.levels if level.name == name)
        return level.axis.value(rows[name])

    def _compute(self, level: _Level, rows: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
        """The level's clock (when it completes one), its rates, and the rows that survive."""
        node = level.node
        keep = np.ones(len(rows["key"]), dtype=bool)
        value = level.axis.value(rows[level.name])
        if level.kind == "source":
            rows["hz:" + node] = value
        elif level.kind == "reference":
            rows["pfd:" + node] = rows["hz:" + self.plls[node].input] / value
        elif level.kind == "whole":
            if self.plls[node].fraction_bits:
                return rows
            rows["hz:" + node] = rows["pfd:" + node] * value
        elif level.kind == "fraction":
            pll = self.plls[node]
            whole = self._value(f"{node}.multiplier", rows)
            rows["hz:" + node] = rows["pfd:" + node] * (whole + value / 2.0**pll.fraction_bits)
        elif level.kind == "divider":
            rows["hz:" + node] = rows["hz:" + self.dividers[node].input] / value
        else:
            mux = self.muxes[node]
            choice = rows[level.name]
            inputs = np.stack([rows["hz:" + name] for name in mux.inputs])
            rows["hz:" + node] = np.take_along_axis(inputs, choice[None, :], axis=0)[0]
            roots = np.stack([self._roots(name, rows) for name in mux.inputs])
            rows["root:" + node] = np.take_along_axis(roots, choice[None, :], axis=0)[0]
            if mux.maximum is not None:
                keep &= rows["hz:" + node] <= float(mux.maximum) * (1 + FLOAT_SLACK)
        if level.rates:
            rows["key"] = np.maximum(rows["key"], self._rate_keys(level, rows))
            keep &= np.isfinite(rows["key"])
        if keep.all():
            return rows
        return {name: column[keep] for name, column in rows.items()}

    def _rate_keys(self, level: _Level, rows: dict[str, np.ndarray]) -> np.ndarray:
        """The largest key of the rates this level's clock feeds, scored once per distinct clock."""
        roots = self._roots(level.node, rows)
        clock = rows["hz:" + level.node]
        result = np.empty(len(clock))
        for root in np.unique(roots):
            chosen = roots == root
            input_clock, back = np.unique(clock[chosen], return_inverse=True)
            key = np.zeros(len(input_clock))
            for rate in level.rates:
                key = np.maximum(key, rate.keys(input_clock, self.budgets[root]))
            result[chosen] = key[back]
        return result

    def _roots(self, node: str, rows: dict[str, np.ndarray]) -> np.ndarray:
        """Index of the source feeding ``node`` in each row."""
        while True:
            if "root:" + node in rows:
                return rows["root:" + node]
            if node in self.sources:
                return np.full(len(rows["key"]), self.sources[node], dtype=np.int64)
            node = self.plls[node].input if node in self.plls else self.dividers[node].input

    # -- exact re-checks ----------------------------------------------------------------------

    def _shortlist(self, rows: dict[str, np.ndarray]) -> None:
        """Re-check exactly, lowest first, the rows whose float key could beat the best."""
        keys = rows["key"]
        bound = math.inf if self.best_key is None else self.best_key
        candidates = np.flatnonzero(keys < bound)
        for row in candidates[np.argsort(keys[candidates], kind="stable")]:
            if keys[row] >= (math.inf if self.best_key is None else self.best_key):
                break
            if self.rechecked >= RECHECK_CAP:
                self.capped = True
                return
            self.rechecked += 1
            found = self._exact(rows, int(row))
            if found is not None and (self.best_key is None or found[0] < self.best_key):
                self.best_key, self.best_plan = found

    def _exact(self, rows: dict[str, np.ndarray], row: int) -> tuple[int, Plan] | None:
        """The exact key and plan of one combination, or None if it breaks a limit."""
        sources: dict[str, Fraction] = {}
        settings: dict[str, SettingValue] = {}
        for level in self.levels:
            index = int(rows[level.name][row])
            if level.kind == "source":
                sources[level.node] = self.scenario.source(level.node).candidates[index]
            elif level.kind == "mux":
                settings[level.name] = self.muxes[level.node].inputs[index]
            else:
                settings[level.name] = int(level.axis.value(np.array([index]))[0])
        tree = evaluate_plan(self.scenario, Plan(sources, settings))
        for peripheral in self.scenario.peripherals:
            input_clock = tree.clocks[peripheral.clock]
            budget = self.scenario.source(tree.roots[peripheral.clock]).budget
            for requirement in peripheral.requirements:
                stages = self.stage_sets.get(requirement.setting)
                chosen = _exact_divisor(requirement, input_clock, budget, stages)
                if chosen is None:
                    return None
                settings.update(chosen)
        plan = Plan(sources, settings)
        evaluation = evaluate_plan(self.scenario, plan)
        if not evaluation.feasible:
            return None
        return exact_key(evaluation), plan


def _blocks(first: np.ndarray, counts: np.ndarray) -> Iterator[tuple[np.ndarray, ...]]:
    """Split the rows' index intervals into blocks of at most BLOCK_ROWS expanded rows."""
    rows = np.flatnonzero(counts > 0)
    starts, sizes = first[rows], counts[rows]
    if len(rows) and sizes.max() > BLOCK_ROWS:  # cut long intervals into pieces
        pieces = -(-sizes // BLOCK_ROWS)
        rows = np.repeat(rows, pieces)
        part = np.arange(len(rows)) - np.repeat(np.cumsum(pieces) - pieces, pieces)
        starts = np.repeat(starts, pieces) + part * BLOCK_ROWS
        sizes = np.minimum(np.repeat(sizes, pieces) - part * BLOCK_ROWS, BLOCK_ROWS)
    ends = np.cumsum(sizes)
    begin = 0
    while begin < len(rows):
        reach = (ends[begin - 1] if begin else 0) + BLOCK_ROWS
        stop = max(begin + 1, int(np.searchsorted(ends, reach, side="right")))
        yield rows[begin:stop], starts[begin:stop], sizes[begin:stop]
        begin = stop


# -- exact divisors -------------------------------------------------------------------------


def rate_key(error: Fraction, budget: Fraction, allowance: Fraction) -> int:
    """One rate's key, as the README defines the worst share: with E = ⌊10⁹·|e|⌋ + 1 and
    X = ⌈E·(10⁹ ± ⌈or⌊10⁹·b⌋)/10⁹⌉ by the error's sign, ⌈10 000·(X + ⌈10⁹·b⌉)/(10⁹·a)⌉."""
    steps = math.floor(abs(error) * ERROR_STEPS) + 1
    raised = math.ceil(budget * ERROR_STEPS)
    if error >= 0:
        worst = steps + math.ceil(Fraction(steps * raised, ERROR_STEPS))
    else:
        worst = steps - math.floor(Fraction(steps * math.floor(budget * ERROR_STEPS), ERROR_STEPS))
    return math.ceil(SHARE_STEPS * Fraction(worst + raised, ERROR_STEPS) / allowance)


def exact_key(evaluation: Evaluation) -> int:
    """The plan's key: the largest rate key (see :func:`rate_key`)."""
    key = 0
    for check in evaluation.checks:
        if check.allowance is None or not check.requirement.ranked_by_share:
            continue
        key = max(key, rate_key(check.error, check.source_budget, check.allowance))
    return key


def _exact_divisor(
    requirement: Requirement,
    input_clock: Fraction,
    budget: Fraction,
    stages: _Stages | None,
) -> dict[str, SettingValue] | None:
    """Settings of the requirement's best divisor (the fastest, for a ceiling); None if none."""
    ideal = input_clock * requirement.numerator / requirement.nominal
    best: tuple[tuple[Fraction, ...], dict[str, SettingValue]] | None = None
    for position, option in enumerate(requirement.options):
        ways = _exact_candidates(requirement, option.divisors, ideal, budget, stages)
        for divisor, stage_values in ways:
            rate = requirement.achieved(input_clock, divisor)
            fitted = _exact_rank(requirement, option, rate, budget, divisor)
            if fitted is None or (best is not None and fitted >= best[0]):
                continue
            settings: dict[str, SettingValue] = {}
            match requirement.divisor:
                case Stages(stages=named):
                    for (name, _), value in zip(named, stage_values, strict=True):
                        settings[requirement.stage_setting(name)] = value
                case Options(options):
                    settings[requirement.setting] = divisor
                    if len(options) > 1:
                        settings[requirement.option_setting] = position
            best = (fitted, settings)
    return None if best is None else best[1]


def _exact_rank(
    requirement: Requirement, option: Option, rate: Fraction, budget: Fraction, divisor: int
) -> tuple[Fraction, ...] | None:
    """How good one divisor is (smaller is better), or None when it misses the limit: the
    key and the exact share for a tolerance, the divisor itself (fastest first) for a ceiling."""
    match requirement:
        case CeilingRate(maximum=maximum, floor=floor):
            fits = rate * (1 + budget) <= maximum and (
                floor is None or rate * (1 - budget) >= floor
            )
            return (Fraction(divisor),) if fits else None
        case ToleranceRate():
            allowance = requirement.allowance_of(option)
            error = rate / requirement.target - 1
            worst = abs(error) + budget * (1 + error)
            if worst > allowance:
                return None
            return (Fraction(rate_key(error, budget, allowance)), worst / allowance)


def _exact_candidates(
    requirement: Requirement,
    divisors: Divisors,
    ideal: Fraction,
    budget: Fraction,
    stages: _Stages | None,
) -> list[_Factored]:
    """Divisors worth trying: nearest below and above the ideal (for a ceiling: the fastest)."""
    if isinstance(requirement, CeilingRate):
        wanted = ideal * (1 + budget)
        if stages is not None:
            found = stages.nearest(wanted)[1]
            return [found] if found else []
        above = _nearest(divisors, wanted)[1]
        return [(above, ())] if above is not None else []
    if stages is not None:
        return [way for way in stages.nearest(ideal) if way is not None]
    return [(value, ()) for value in _nearest(divisors, ideal) if value is not None]


def _nearest(values: Divisors, x: Fraction) -> tuple[int | None, int | None]:
    """The largest allowed value ≤ x and the smallest ≥ x (None where there is none)."""
    if isinstance(values, range):
        below_index = min(math.floor((x - values.start) / values.step), len(values) - 1)
        above_index = max(math.ceil((x - values.start) / values.step), 0)
        below = values[below_index] if below_index >= 0 else None
        above = values[above_index] if above_index < len(values) else None
        return below, above
    position = bisect.bisect_right(values, x)
    below = values[position - 1] if position > 0 else None
    position = bisect.bisect_left(values, x)
    above = values[position] if position < len(values) else None
    return below, above


def enumerate_plans(scenario: Scenario, *, cap: float = 20.0) -> Enumeration:
    """Enumerate every combination of ``scenario``'s settings for at most ``cap`` seconds.

    Every rate is keyed in the search's own steps (:func:`rate_key`), so the optimum
    compares with the search's.
    """
    return _Enumerator(scenario, cap).run()
