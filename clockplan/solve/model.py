"""The CP-SAT model of one scenario: exact integer arithmetic on scaled frequencies.

Every oscillator frequency is ``unit × x`` with ``x`` an integer variable over the
source's candidates (``unit`` is the exact greatest common divisor of the candidates).
Every clock is then ``unit × amount / count``: ``amount`` grows with PLL multipliers,
``count`` with reference dividers and dividers. Limits are linear inequalities between
the two, and a rate's synthesis error is the exact integer ``deviation = top·amount −
scale·count`` (with ``count`` holding the rate's own divisor), relative error
``deviation / (scale·count)``.

What the ranking reads, per rate with a tolerance:

* ``error`` E = ⌈10⁹·|e|⌉, the synthesis error in steps of 10⁻⁹ (exact when 64 bits allow;
  otherwise an upper bound within a few steps, and the rate is listed as bounded);
* ``worst`` X, the synthesis part of the worst case |e| + b·(1 + e) − b = |e|·(1 ± b), in
  the same steps: ⌈E·(10⁹ + ⌈10⁹b⌉)/10⁹⌉ when e ≥ 0, ⌈E·(10⁹ − ⌊10⁹b⌋)/10⁹⌉ when e < 0;
* ``share`` S = ⌈10 000·(X + ⌈10⁹b⌉) / (10⁹·a)⌉, the worst case as a share of the allowance a
  in steps of 1/10 000.

Every rounding goes up (a figure is never made to look better than it is) and every hard
limit is exact, or held slightly tighter when 64 bits run out (listed as rounded). The
exact figures are recomputed afterwards by :mod:`clockplan.evaluate`.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from fractions import Fraction

from ortools.sat.python import cp_model

from clockplan.errors import InternalError, ModelTooLargeError
from clockplan.peripherals.base import (
    CeilingRate,
    Divisors,
    Option,
    Requirement,
    Stages,
    ToleranceRate,
    largest,
    smallest,
    times,
)
from clockplan.plan import SettingValue, divider_key, mux_key, pll_keys
from clockplan.quantities import format_hz, format_relative
from clockplan.scenario import Divider, Mux, Pll, Scenario
from clockplan.topology import evaluation_order

__all__ = [
    "ClockModel",
    "RateHandles",
    "Limit",
    "TreeValues",
    "build_model",
    "SHARE_STEPS",
    "ERROR_DIGITS",
    "LIMIT",
    "Term",
    "Expression",
    "enforced",
]

SHARE_STEPS = 10_000
"""Shares of an allowance are counted in steps of 1/10 000."""
ERROR_DIGITS = 9
"""Synthesis errors are counted in steps of 10**-9."""
ERROR_STEPS = 10**ERROR_DIGITS
LIMIT = 2**61
"""Largest magnitude any term of the model may reach: CP-SAT refuses a constraint whose terms
may add up past 2**62, and a constraint here has at most three large terms."""
RELAXED_ERROR = Fraction(1, 2)
"""In a relaxable model every rate still stays within 50 % of its target (a modelling bound)."""

Expression = cp_model.LinearExpr | int
"""A linear expression of the model, or a constant (numpy integers are never used)."""
Literal = cp_model.IntVar | bool
"""An enforcement literal, or True where a condition always holds."""


@dataclass(frozen=True)
class Term:
    """A non-negative integer expression of the model with its exact bounds."""

    expr: Expression
    low: int
    high: int

    @property
    def constant(self) -> bool:
        return self.low == self.high


@dataclass(frozen=True)
class Limit:
    """One limit of the scenario that an explanation may name or relax."""

    key: str
    text: str
    """The limit in words, with its numbers."""
    literal: cp_model.IntVar
    """True when the limit holds (an assumption in a relaxable model)."""
    requirement: Requirement | None = None
    """The rate this limit belongs to, for an allowance or a ceiling."""
    share: cp_model.IntVar | None = None
    """The rate's share variable, minimised when its allowance is relaxed."""


@dataclass(frozen=True)
class RateHandles:
    """The variables of one required rate."""

    requirement: Requirement
    node: str
    """The clock feeding the rate."""
    decisions: tuple[cp_model.IntVar, ...]
    """The rate's own settings (divisor, option index, stages): hinted between stages."""
    share: cp_model.IntVar | None = None
    """Worst case as a share of the allowance, steps of 1/SHARE_STEPS (tolerances only)."""
    worst: cp_model.IntVar | None = None
    """Synthesis part of the worst case, steps of 10**-9 (tolerances only)."""
    hertz: cp_model.IntVar | None = None
    """The rate rounded down to whole hertz (ceilings only: made as fast as allowed)."""
    deviation: cp_model.IntVar | None = None
    """top·amount − scale·count: the synthesis error e is deviation / scaled_count, exactly."""
    magnitude: cp_model.IntVar | None = None
    """|deviation| (tolerances only)."""
    scaled_count: Term | None = None
    """scale·count, the error's denominator (tolerances only)."""


@dataclass(frozen=True)
class _Divisor:
    """A rate's own divisor as built: head × last, and which values ``last`` may take."""

    head: Term
    """The product of every stage but the last (1 when the divisor is one setting)."""
    last: Term
    ranges: list[tuple[Divisors, Literal]]
    """The allowed values of ``last`` under each option's literal (True when alone)."""
    literals: list[tuple[Option, Literal]]
    decisions: tuple[cp_model.IntVar, ...]
    index: cp_model.IntVar | None = None
    """For many options sharing one prescaler: the option's index (the options are then a
    table the constraints look up, not one copy of the constraints per option)."""


@dataclass(frozen=True)
class TreeValues:
    """What a solution says about the clock tree (the rates' own settings are settled apart)."""

    sources: dict[str, Fraction]
    settings: dict[str, SettingValue]
    clocks: dict[str, Fraction]
    roots: dict[str, str]
    """For each clock, the oscillator it comes from in this solution."""


@dataclass
class ClockModel:
    """A built model with handles to read a plan back and to rank plans."""

    scenario: Scenario
    model: cp_model.CpModel
    units: dict[str, Fraction] = field(default_factory=dict)
    """Each clock is units[node] × amount / count."""
    amount: dict[str, Term] = field(default_factory=dict)
    count: dict[str, Term] = field(default_factory=dict)
    roots: dict[str, dict[str, Literal]] = field(default_factory=dict)
    """For each clock, the sources it may come from and the literal true when it does."""
    source_values: dict[str, cp_model.IntVar] = field(default_factory=dict)
    tree_settings: dict[str, cp_model.IntVar] = field(default_factory=dict)
    """PLL, divider and mux settings by plan key (mux settings hold the input's index)."""
    mux_inputs: dict[str, tuple[str, ...]] = field(default_factory=dict)
    """Each mux setting's key with the inputs its index picks from."""
    rates: list[RateHandles] = field(default_factory=list)
    used: dict[str, Literal] = field(default_factory=dict)
    """For each source, whether some peripheral or fastest clock is fed from it."""
    worst: cp_model.IntVar | None = None
    """Worst share of an allowance in steps (None when no rate has a tolerance)."""
    shares_total: cp_model.IntVar | None = None
    errors_total: cp_model.IntVar | None = None
    fastest_total: cp_model.IntVar | None = None
    ceilings_total: cp_model.IntVar | None = None
    cost_total: cp_model.IntVar | None = None
    """Total cost of the sources in use, in steps of ``cost_step`` (when costs are given)."""
    cost_step: Fraction = Fraction(1)
    order: list[tuple[cp_model.IntVar, int, int]] = field(default_factory=list)
    """The tree's settings in the ranking's last order, with their bounds: smaller first."""
    bounded_errors: set[str] = field(default_factory=set)
    """Rates whose error (or share) the model bounds from above rather than exactly."""
    rounded_limits: set[str] = field(default_factory=set)
    """Rates whose limit had to be held slightly tighter than written (64-bit room)."""
    limits: dict[str, Limit] = field(default_factory=dict)
    """Guarded limits by key (only in a relaxable model), in the order they were built."""

    @property
    def decisions(self) -> list[cp_model.IntVar]:
        """Every variable that makes a plan: hinted from one stage to the next."""
        found = list(self.source_values.values()) + list(self.tree_settings.values())
        for rate in self.rates:
            found.extend(rate.decisions)
        return found

    def read_tree(self, solver: cp_model.CpSolver) -> TreeValues:
        """The oscillator frequencies, tree settings, clocks and roots of the solution."""
        sources = {
            name: self.units[name] * solver.value(var) for name, var in self.source_values.items()
        }
        settings: dict[str, SettingValue] = {}
        for key, var in self.tree_settings.items():
            value = int(solver.value(var))
            settings[key] = self.mux_inputs[key][value] if key in self.mux_inputs else value
        clocks = {
            node: self.units[node]
            * Fraction(
                int(solver.value(self.amount[node].expr)), int(solver.value(self.count[node].expr))
            )
            for node in self.amount
        }
        roots = {node: _chosen_root(solver, ways) for node, ways in self.roots.items()}
        return TreeValues(sources, settings, clocks, roots)

    def read_choice(self, solver: cp_model.CpSolver) -> dict[str, Fraction]:
        """The oscillators the solution uses, with their frequencies (what makes a rank)."""
        return {
            name: self.units[name] * solver.value(var)
            for name, var in self.source_values.items()
            if _holds(solver, self.used[name])
        }

    def exclude_choice(self, choice: Mapping[str, Fraction]) -> None:
        """Forbid every plan that uses exactly these oscillators at these frequencies."""
        differs: list[cp_model.LiteralT] = []
        for source in self.scenario.sources:
            used = self.used[source.name]
            if source.name not in choice:
                if used is not False:
                    differs.append(self._as_literal(used))
                continue
            if used is not True:
                differs.append(self._as_literal(used).Not())
            if len(source.candidates) > 1:
                value = _whole_multiple(choice[source.name], self.units[source.name])
                flag = self.model.new_bool_var(f"differs[{source.name}]")
                self.model.add(self.source_values[source.name] != value).only_enforce_if(flag)
                differs.append(flag)
        self.model.add_bool_or(differs)  # empty: no further choice exists

    def _as_literal(self, literal: Literal) -> cp_model.IntVar:
        if isinstance(literal, bool):
            return self.model.new_constant(int(literal))
        return literal


def enforced(*conditions: Literal) -> list[cp_model.IntVar]:
    """The literals a constraint is enforced by: those that always hold (True) left out."""
    found: list[cp_model.IntVar] = []
    for condition in conditions:
        if condition is False:
            raise InternalError("a constraint was enforced by a condition that never holds")
        if not isinstance(condition, bool):
            found.append(condition)
    return found


def _holds(solver: cp_model.CpSolver, literal: Literal) -> bool:
    return literal if isinstance(literal, bool) else bool(solver.boolean_value(literal))


def _chosen_root(solver: cp_model.CpSolver, ways: Mapping[str, Literal]) -> str:
    return next(root for root, literal in ways.items() if _holds(solver, literal))


def build_model(scenario: Scenario, *, relaxable: bool = False) -> ClockModel:
    """Translate ``scenario`` into a CP-SAT model.

    With ``relaxable`` every limit (allowance, PFD, VCO, min, max, ceiling) is guarded
    by a literal in :attr:`ClockModel.limits`, so that an explanation can switch limits
    off one by one. Every rate then stays within 50 % of its target (RELAXED_ERROR), and
    shares may exceed one allowance.
    """
    handles = _Builder(scenario, relaxable).build()
    widths = sum(_upper(var) - _lower(var) for var in _variables(handles.model))
    if widths >= 2**63:
        raise ModelTooLargeError(
            f"{scenario.file}: the model's variables span more than 64-bit integers hold "
            "together; narrow the ranges, the fraction bits or the candidate frequencies"
        )
    problem = handles.model.validate()
    if problem:
        said = " ".join(problem.split())
        raise InternalError(f"{scenario.file}: CP-SAT refuses the model: {said}")
    return handles


def _variables(model: cp_model.CpModel) -> Iterator[cp_model.IntVar]:
    for index in range(len(model.proto.variables)):
        yield model.get_int_var_from_proto_index(index)


class _Builder:
    def __init__(self, scenario: Scenario, relaxable: bool) -> None:
        self.scenario = scenario
        self.relaxable = relaxable
        self.model = cp_model.CpModel()
        self.handles = ClockModel(scenario, self.model)
        self.feeds: dict[str, list[Literal]] = {}
        """For each source, the literals under which some peripheral or goal is fed from it."""
        self.shares: list[cp_model.IntVar] = []
        self.worsts: list[cp_model.IntVar] = []
        self.fastest: list[cp_model.IntVar] = []
        self.ceilings: list[cp_model.IntVar] = []
        self.orders: dict[str, list[tuple[cp_model.IntVar, int, int]]] = {}
        """Each node's settings with their bounds, for the ranking's last order."""

    def build(self) -> ClockModel:
        scenario = self.scenario
        for name in evaluation_order(scenario):
            node = scenario.node(name)
            if isinstance(node, Pll):
                with self.located(f"plls.{name}"):
                    self.add_pll(node)
            elif isinstance(node, Divider):
                with self.located(f"dividers.{name}"):
                    self.add_divider(node)
            elif isinstance(node, Mux):
                with self.located(f"muxes.{name}"):
                    self.add_mux(node)
            else:
                with self.located(f"sources.{name}.choose"):
                    self.add_source(name)
        for peripheral in scenario.peripherals:
            with self.located(f"peripherals.{peripheral.name}"):
                for requirement in peripheral.requirements:
                    self.add_rate(requirement, peripheral.clock)
        self.add_usage()
        self.add_totals()
        self.add_order()
        # decide the tree first: once it is fixed, every rate is left two divisors to try
        tree = [var for var, low, high in self.handles.order if low < high]
        if tree:
            self.model.add_decision_strategy(
                tree,
                cp_model.CHOOSE_FIRST,  # type: ignore[arg-type]  # OR-Tools annotates the enum
                cp_model.SELECT_MIN_VALUE,  # type: ignore[arg-type]  # class, not its values
            )
        return self.handles

    @contextmanager
    def located(self, key: str) -> Iterator[None]:
        """Name the scenario file and ``key`` in any size error raised inside."""
        try:
            yield
        except ModelTooLargeError as error:
            if str(error).startswith(f"{self.scenario.file}: "):
                raise
            raise ModelTooLargeError(f"{self.scenario.file}: {key}: {error}") from None

    def guard(
        self, key: str, text: str, *, requirement: Requirement | None = None
    ) -> list[cp_model.IntVar]:
        """Enforcement literals for one limit: none normally, its guard when relaxable."""
        if not self.relaxable:
            return []
        if key not in self.handles.limits:
            literal = self.model.new_bool_var(f"holds[{key}]")
            self.handles.limits[key] = Limit(key, text, literal, requirement)
        return [self.handles.limits[key].literal]

    # -- variables -----------------------------------------------------------------------------

    def choice(self, name: str, values: Divisors) -> cp_model.IntVar:
        """An integer variable over an allowed-value set (a stepped range via a counter)."""
        if isinstance(values, range):
            var = self.model.new_int_var(values[0], values[-1], name)
            if values.step > 1 and len(values) > 1:
                steps = self.model.new_int_var(0, len(values) - 1, f"{name}/step")
                self.model.add(var == values.start + values.step * steps)
            return var
        return self.model.new_int_var_from_domain(cp_model.Domain.from_values(list(values)), name)

    def int_var(self, low: int, high: int, name: str) -> cp_model.IntVar:
        """A variable over [low, high]; an empty range makes the model infeasible (CP-SAT then
        proves it), rather than a variable without values."""
        if low > high:
            self.model.add_bool_or([])
            high = low
        return self.model.new_int_var(low, high, name)

    def product(
        self, left: Term, right: Term, name: str, low: int | None = None, high: int | None = None
    ) -> Term:
        """left × right as a term, held within [low, high] when given (a window the rest of
        the model implies anyway: it keeps the product's variable inside 64 bits)."""
        low = left.low * right.low if low is None else max(low, left.low * right.low)
        high = left.high * right.high if high is None else min(high, left.high * right.high)
        if low > high:
            self.model.add_bool_or([])  # no value fits: the model is infeasible, CP-SAT says so
            high = low
        _check(high, name)
        if left.constant and right.constant:
            return Term(left.low * right.low, left.low * right.low, left.low * right.low)
        if left.constant or right.constant:
            constant, other = (left, right) if left.constant else (right, left)
            term = Term(
                constant.low * other.expr, constant.low * other.low, constant.low * other.high
            )
            if low > term.low or high < term.high:
                self.model.add_linear_constraint(term.expr, low, high)
            return Term(term.expr, max(low, term.low), min(high, term.high))
        var = self.int_var(low, high, name)
        self.model.add_multiplication_equality(
            var, [self.plain(left, f"{name}/left"), self.plain(right, f"{name}/right")]
        )
        return Term(var, low, high)

    def plain(self, term: Term, name: str) -> cp_model.IntVar:
        """The term as a variable of its own (CP-SAT's products presolve badly on scaled ones)."""
        if isinstance(term.expr, cp_model.IntVar):
            return term.expr
        var = self.int_var(term.low, term.high, name)
        self.model.add(var == term.expr)
        return var

    def floor_hertz(self, name: str, unit: Fraction, amount: Term, count: Term) -> cp_model.IntVar:
        """⌊unit · amount / count⌋: a clock in whole hertz, for goals that make it fast."""
        _check(unit.numerator * amount.high, name)
        _check(unit.denominator * count.high, name)
        high = math.floor(unit * Fraction(amount.high, max(count.low, 1)))
        hertz = self.int_var(0, high, f"hertz[{name}]")
        numerator = self.plain(
            Term(
                unit.numerator * amount.expr,
                unit.numerator * amount.low,
                unit.numerator * amount.high,
            ),
            f"hertz[{name}]/numerator",
        )
        denominator = self.plain(
            Term(
                unit.denominator * count.expr,
                unit.denominator * count.low,
                unit.denominator * count.high,
            ),
            f"hertz[{name}]/denominator",
        )
        self.model.add_division_equality(hertz, numerator, denominator)
        return hertz

    # -- limits --------------------------------------------------------------------------------

    def frequency_between(
        self,
        node: str,
        unit: Fraction,
        amount: Term,
        count: Term,
        low: Fraction | None,
        high: Fraction | None,
    ) -> None:
        """low ≤ unit · amount / count ≤ high, as exact integer inequalities."""
        for bound, sense in ((low, 1), (high, -1)):
            if bound is None or (bound <= 0 and sense == 1):
                continue
            ratio = bound / unit  # amount vs ratio · count
            _check(ratio.denominator * amount.high, node)
            _check(ratio.numerator * count.high, node)
            left = ratio.denominator * amount.expr
            right = ratio.numerator * count.expr
            side = "at least" if sense == 1 else "at most"
            enforce = self.guard(f"{node} {side}", f"{node} {side} {format_hz(bound)}")
            self.model.add(left >= right if sense == 1 else left <= right).only_enforce_if(enforce)

    # -- nodes ---------------------------------------------------------------------------------

    def add_source(self, name: str) -> None:
        source = self.scenario.source(name)
        unit = _common_unit(source.candidates)
        order = [_whole_multiple(frequency, unit) for frequency in source.candidates]
        values = sorted(set(order))
        _check(values[-1], name)
        var = self.model.new_int_var_from_domain(cp_model.Domain.from_values(values), f"x[{name}]")
        self.handles.source_values[name] = var
        self.handles.units[name] = unit
        self.handles.amount[name] = Term(var, values[0], values[-1])
        self.handles.count[name] = Term(1, 1, 1)
        self.handles.roots[name] = {name: True}
        if len(values) > 1:
            self.orders[name] = [self.preference(name, var, order, values)]

    def preference(
        self, name: str, var: cp_model.IntVar, order: list[int], values: list[int]
    ) -> tuple[cp_model.IntVar, int, int]:
        """The variable that orders a source's candidates: the value itself when the list runs
        upwards, else its position in the list (earlier candidates first)."""
        if order == values:
            return var, values[0], values[-1]
        position = self.int_var(0, len(order) - 1, f"position[{name}]")
        self.model.add_element(position, order, var)
        return position, 0, len(order) - 1

    def add_pll(self, pll: Pll) -> None:
        reference_key, multiplier_key, fraction_key = pll_keys(pll.name)
        reference = self.choice(reference_key, pll.reference_divider)
        whole = self.choice(multiplier_key, pll.multiplier)
        settings = self.handles.tree_settings
        settings[reference_key], settings[multiplier_key] = reference, whole
        order = [(reference, min(pll.reference_divider), max(pll.reference_divider))]
        order.append((whole, min(pll.multiplier), max(pll.multiplier)))
        modulus = 2**pll.fraction_bits
        feedback = Term(
            modulus * whole, modulus * min(pll.multiplier), modulus * max(pll.multiplier)
        )
        if pll.fraction_bits:
            fraction = self.int_var(0, modulus - 1, fraction_key)
            settings[fraction_key] = fraction
            order.append((fraction, 0, modulus - 1))
            feedback = Term(feedback.expr + fraction, feedback.low, feedback.high + modulus - 1)
        self.orders[pll.name] = order
        handles = self.handles
        amount_in, count_in = handles.amount[pll.input], handles.count[pll.input]
        divided = self.product(
            count_in,
            Term(reference, smallest(pll.reference_divider), largest(pll.reference_divider)),
            f"count_pfd[{pll.name}]",
        )
        unit = handles.units[pll.input]
        self.frequency_between(f"{pll.name} PFD", unit, amount_in, divided, *pll.pfd)
        amount = self.product(amount_in, feedback, f"amount[{pll.name}]")
        # The fraction's modulus goes into the unit, not the count: a count that is a multiple
        # of a large constant makes CP-SAT's presolve leave a product it cannot load, and the
        # process aborts (tests/test_solver.py).
        unit = unit / modulus
        self.frequency_between(f"{pll.name} VCO", unit, amount, divided, *pll.vco)
        handles.units[pll.name] = unit
        handles.amount[pll.name], handles.count[pll.name] = amount, divided
        handles.roots[pll.name] = handles.roots[pll.input]

    def add_divider(self, divider: Divider) -> None:
        handles = self.handles
        key = divider_key(divider.name)
        value = self.choice(key, divider.divide)
        handles.tree_settings[key] = value
        self.orders[divider.name] = [(value, min(divider.divide), max(divider.divide))]
        count = self.product(
            handles.count[divider.input],
            Term(value, min(divider.divide), max(divider.divide)),
            f"count[{divider.name}]",
        )
        amount = handles.amount[divider.input]
        unit = handles.units[divider.input]
        handles.units[divider.name] = unit
        self.frequency_between(divider.name, unit, amount, count, divider.minimum, divider.maximum)
        handles.amount[divider.name], handles.count[divider.name] = amount, count
        handles.roots[divider.name] = handles.roots[divider.input]
        if divider.fastest:
            self.fastest.append(self.floor_hertz(divider.name, unit, amount, count))
            for root, active in handles.roots[divider.name].items():
                self.feeds.setdefault(root, []).append(active)

    def add_mux(self, mux: Mux) -> None:
        handles = self.handles
        key = mux_key(mux.name)
        selector = self.int_var(0, len(mux.inputs) - 1, key)
        handles.tree_settings[key] = selector
        self.orders[mux.name] = [(selector, 0, len(mux.inputs) - 1)]
        handles.mux_inputs[key] = mux.inputs
        # a common unit for the inputs: each input's amount scaled by a whole factor
        unit = _common_unit(handles.units[name] for name in mux.inputs)
        handles.units[mux.name] = unit
        amounts = []
        for name in mux.inputs:
            factor = int(handles.units[name] / unit)
            term = handles.amount[name]
            _check(factor * term.high, mux.name)
            amounts.append(Term(factor * term.expr, factor * term.low, factor * term.high))
        counts = [handles.count[name] for name in mux.inputs]
        amount_var = self.int_var(
            min(t.low for t in amounts), max(t.high for t in amounts), f"amount[{mux.name}]"
        )
        count_var = self.int_var(
            min(t.low for t in counts), max(t.high for t in counts), f"count[{mux.name}]"
        )
        roots: dict[str, list[cp_model.IntVar]] = {}
        for index, name in enumerate(mux.inputs):
            chosen = self.model.new_bool_var(f"{mux.name}.chooses[{name}]")
            self.model.add(selector == index).only_enforce_if(chosen)
            self.model.add(selector != index).only_enforce_if(~chosen)
            self.model.add(amount_var == amounts[index].expr).only_enforce_if(chosen)
            self.model.add(count_var == counts[index].expr).only_enforce_if(chosen)
            for root, active in handles.roots[name].items():
                if active is True:
                    roots.setdefault(root, []).append(chosen)
                else:
                    both = self.model.new_bool_var(f"{mux.name}.via[{name},{root}]")
                    self.model.add_multiplication_equality(both, [chosen, active])
                    roots.setdefault(root, []).append(both)
        amount = Term(amount_var, _lower(amount_var), _upper(amount_var))
        count = Term(count_var, _lower(count_var), _upper(count_var))
        self.frequency_between(mux.name, unit, amount, count, None, mux.maximum)
        handles.amount[mux.name], handles.count[mux.name] = amount, count
        handles.roots[mux.name] = {}
        for root, ways in roots.items():
            flag = self.model.new_bool_var(f"{mux.name}.from[{root}]")
            self.model.add(flag == sum(ways))
            handles.roots[mux.name][root] = flag

    # -- rates ---------------------------------------------------------------------------------

    def add_rate(self, requirement: Requirement, node: str) -> None:
        handles = self.handles
        for root, active in handles.roots[node].items():
            self.feeds.setdefault(root, []).append(active)
        unit = handles.units[node]
        nominal = requirement.nominal
        top = unit.numerator * nominal.denominator * requirement.numerator
        scale = nominal.numerator * unit.denominator
        common = math.gcd(top, scale)
        top, scale = top // common, scale // common
        # achieved / nominal = top·amount / (scale·count), count = node count × divisor
        divisor = self.divisor(requirement)
        match requirement:
            case CeilingRate():
                self.add_ceiling(requirement, node, top, scale, divisor)
            case ToleranceRate():
                _Rate(self, requirement, node, top, scale, divisor).build()

    def divisor(self, requirement: Requirement) -> _Divisor:
        """The rate's own divisor as ``head × last``: ``last`` the final stage (or the whole
        divisor), each option with the literal true when it is chosen."""
        if isinstance(requirement.divisor, Stages):
            return self.stage_product(requirement, requirement.divisor)
        choices = requirement.divisor.options
        low = min(smallest(option.divisors) for option in choices)
        high = max(largest(option.divisors) for option in choices)
        one = Term(1, 1, 1)
        if len(choices) == 1:
            var = self.choice(requirement.setting, choices[0].divisors)
            only = choices[0]
            return _Divisor(
                one, Term(var, low, high), [(only.divisors, True)], [(only, True)], (var,)
            )
        shared = _shared_prescaler(choices)
        index = self.int_var(0, len(choices) - 1, requirement.option_setting)
        if shared is not None:
            factors = [option.factor for option in choices]
            quanta = self.model.new_int_var_from_domain(
                cp_model.Domain.from_values(sorted(set(factors))), f"factor[{requirement.setting}]"
            )
            self.model.add_element(index, factors, quanta)
            prescaler = self.choice(f"prescaler[{requirement.setting}]", shared)
            return _Divisor(
                Term(quanta, min(factors), max(factors)),
                Term(prescaler, smallest(shared), largest(shared)),
                [(shared, True)],
                [(option, True) for option in choices],
                (index, prescaler),
                index,
            )
        domains = [_domain(option.divisors) for option in choices]
        union = domains[0]
        for domain in domains[1:]:
            union = union.union_with(domain)
        var = self.model.new_int_var_from_domain(union, requirement.setting)
        literals: list[tuple[Option, Literal]] = []
        for position, (option, domain) in enumerate(zip(choices, domains, strict=True)):
            chosen = self.model.new_bool_var(f"{requirement.option_setting}[{position}]")
            self.model.add(index == position).only_enforce_if(chosen)
            self.model.add(index != position).only_enforce_if(~chosen)
            self.model.add_linear_expression_in_domain(var, domain).only_enforce_if(chosen)
            literals.append((option, chosen))
        ranges = [(option.divisors, chosen) for option, chosen in literals]
        return _Divisor(one, Term(var, low, high), ranges, literals, (var, index))

    def stage_product(self, requirement: Requirement, divisor: Stages) -> _Divisor:
        """A product of stages as ``head × last``: every stage but the last, then the last."""
        head: Term = Term(1, 1, 1)
        stages = []
        for name, values in divisor.stages:
            stage = self.choice(requirement.stage_setting(name), values)
            stages.append((stage, values))
        for (stage, values), (name, _) in zip(stages[:-1], divisor.stages, strict=False):
            term = Term(stage, smallest(values), largest(values))
            head = self.product(head, term, f"{requirement.setting}*{name}")
        last, values = stages[-1]
        return _Divisor(
            head,
            Term(last, smallest(values), largest(values)),
            [(values, True)],
            [(divisor.options[0], True)],
            tuple(stage for stage, _ in stages),
        )

    def counts(
        self, requirement: Requirement, node: str, divisor: _Divisor, low: int, high: int
    ) -> tuple[Term, Term]:
        """``base`` = the node's count × every stage but the last, and ``count`` = base ×
        the last, held within [low, high] (the window the rate's limits imply)."""
        count_in = self.handles.count[node]
        last = divisor.last
        base = self.product(
            count_in,
            divisor.head,
            f"base[{requirement.setting}]",
            -(-low // last.high),
            high // max(last.low, 1),
        )
        count = self.product(base, last, f"count[{requirement.setting}]", low, high)
        return base, count

    def neighbours(
        self,
        requirement: Requirement,
        divisor: _Divisor,
        deviation: Expression,
        scale: int,
        base: Term,
    ) -> None:
        """The divisor sits next to the ideal one: the best divisor for the clock always does
        (the error falls on one side of the ideal and rises on the other), so nothing better is
        cut off, and the search is left with two divisors per clock instead of thousands.

        With the ideal q = top·amount / (scale·base): d − step < q unless d is the first
        value, q < d + step unless d is the last, for a divisor over a (stepped) range.
        """
        last = divisor.last.expr
        for values, chosen in divisor.ranges:
            if not isinstance(values, range) or len(values) < 2:
                continue
            enforce = [] if chosen is True else [chosen]
            step = values.step
            _check(step * scale * base.high, requirement.setting)
            above_first = self.model.new_bool_var(f"above_first[{requirement.setting}]")
            self.model.add(last >= values.start + step).only_enforce_if(above_first)
            self.model.add(last < values.start + step).only_enforce_if(~above_first)
            below_last = self.model.new_bool_var(f"below_last[{requirement.setting}]")
            self.model.add(last <= values[-1] - step).only_enforce_if(below_last)
            self.model.add(last > values[-1] - step).only_enforce_if(~below_last)
            spread = step * scale * base.expr
            self.model.add(-deviation <= spread - 1).only_enforce_if(enforce + [above_first])
            self.model.add(deviation <= spread - 1).only_enforce_if(enforce + [below_last])

    def add_ceiling(
        self,
        requirement: CeilingRate,
        node: str,
        top: int,
        scale: int,
        divisor: _Divisor,
    ) -> None:
        """rate·(1 + budget) ≤ maximum (and rate·(1 − budget) ≥ floor); as fast as allowed."""
        handles = self.handles
        amount, count_in = handles.amount[node], handles.count[node]
        label = f"{requirement.peripheral} ({requirement.label})"
        held = self.guard(
            f"{requirement.setting} at most",
            f"{label} at most {format_hz(requirement.maximum)} with its source's budget",
            requirement=requirement,
        )
        kept: list[cp_model.IntVar] = []
        if requirement.floor is not None:
            kept = self.guard(
                f"{requirement.setting} at least",
                f"{label} at least {format_hz(requirement.floor)} with its source's budget",
                requirement=requirement,
            )
        budgets = {root: self.scenario.source(root).budget for root in handles.roots[node]}
        least_budget = min(budgets.values())
        _check(top * amount.high, requirement.setting)
        # the window the maximum (and floor) imply for scale·count keeps the product in range
        low = math.ceil(Fraction(top * amount.low, scale) * (1 + least_budget))
        high = count_in.high * divisor.head.high * divisor.last.high
        if requirement.floor is not None and least_budget < 1:
            slowest = requirement.floor / requirement.maximum  # floor as a share of the maximum
            high = min(
                high, math.floor(Fraction(top * amount.high, scale) * (1 - least_budget) / slowest)
            )
        room = (LIMIT - 1) // (2 * scale)
        if high > room:
            high = room
            handles.rounded_limits.add(requirement.setting)
        if self.relaxable:
            low = count_in.low * divisor.head.low * divisor.last.low
        base, count = self.counts(requirement, node, divisor, low, high)
        sizes = (top * amount.high, scale * count.high)
        fasts = {root: _fit(1 + budget, *sizes, up=True) for root, budget in budgets.items()}
        for root, active in handles.roots[node].items():
            enforce = enforced(active)
            fast = fasts[root]
            self.model.add(
                fast.numerator * top * amount.expr <= fast.denominator * scale * count.expr
            ).only_enforce_if(enforce + held)
            if requirement.floor is not None:
                wanted = requirement.floor / requirement.maximum
                slow = _fit((1 - budgets[root]) / wanted, *sizes, up=False)
                self.model.add(
                    slow.numerator * top * amount.expr >= slow.denominator * scale * count.expr
                ).only_enforce_if(enforce + kept)
        numerator = Term(
            requirement.numerator * amount.expr,
            requirement.numerator * amount.low,
            requirement.numerator * amount.high,
        )
        hertz = self.floor_hertz(requirement.setting, handles.units[node], numerator, count)
        self.ceilings.append(hertz)
        self.fastest_divisor(requirement, node, divisor, fasts, top, scale, base, count)
        handles.rates.append(RateHandles(requirement, node, divisor.decisions, hertz=hertz))

    def fastest_divisor(
        self,
        requirement: Requirement,
        node: str,
        divisor: _Divisor,
        fasts: Mapping[str, Fraction],
        top: int,
        scale: int,
        base: Term,
        count: Term,
    ) -> None:
        """Under a ceiling the best divisor is the smallest the maximum allows: one step less
        would be too fast (unless it is the first value). Nothing better is cut off."""
        if self.relaxable:
            return
        amount = self.handles.amount[node]
        for values, chosen in divisor.ranges:
            if not isinstance(values, range) or len(values) < 2:
                continue
            step = values.step
            _check(step * scale * base.high, requirement.setting)
            above_first = self.model.new_bool_var(f"above_first[{requirement.setting}]")
            self.model.add(divisor.last.expr >= values.start + step).only_enforce_if(above_first)
            self.model.add(divisor.last.expr < values.start + step).only_enforce_if(~above_first)
            for root, active in self.handles.roots[node].items():
                enforce = enforced(active, chosen)
                fast = fasts[root]
                # fast·top·amount > scale·(count − step·base): a step less breaks the maximum
                self.model.add(
                    fast.numerator * top * amount.expr
                    >= fast.denominator * scale * (count.expr - step * base.expr) + 1
                ).only_enforce_if(enforce + [above_first])

    # -- totals --------------------------------------------------------------------------------

    def add_usage(self) -> None:
        """One literal per source: some peripheral (or fastest clock) is fed from it."""
        for source in self.scenario.sources:
            ways = self.feeds.get(source.name, [])
            if not ways:
                self.handles.used[source.name] = False
            elif any(way is True for way in ways):
                self.handles.used[source.name] = True
            else:
                used = self.model.new_bool_var(f"uses[{source.name}]")
                self.model.add_max_equality(used, ways)
                self.handles.used[source.name] = used

    def add_totals(self) -> None:
        """One variable per ranking criterion, so that a stage can hold it by its domain."""
        handles = self.handles
        handles.worst = self.maximum("worst_share", self.shares)
        handles.shares_total = self.total("shares_total", self.shares)
        handles.errors_total = self.total("errors_total", self.worsts)
        handles.fastest_total = self.total("fastest_total", self.fastest)
        handles.ceilings_total = self.total("ceilings_total", self.ceilings)
        self.add_cost()

    def maximum(self, name: str, terms: list[cp_model.IntVar]) -> cp_model.IntVar | None:
        if not terms:
            return None
        var = self.int_var(0, max(_upper(term) for term in terms), name)
        for term in terms:
            self.model.add(term <= var)
        return var

    def total(self, name: str, terms: list[cp_model.IntVar]) -> cp_model.IntVar | None:
        if not terms:
            return None
        high = sum(_upper(term) for term in terms)
        _check(high, name)
        var = self.int_var(sum(_lower(term) for term in terms), high, name)
        self.model.add(var == sum(terms))
        return var

    def add_cost(self) -> None:
        """Total cost of the sources some peripheral uses, in the scenario's smallest step."""
        costs = {s.name: s.cost for s in self.scenario.sources if s.cost is not None}
        if not costs:
            return
        step = math.lcm(*(cost.denominator for cost in costs.values()))
        whole = {name: int(cost * step) for name, cost in costs.items()}
        _check(sum(whole.values()), "cost")
        total: Expression = 0
        for name, amount in whole.items():
            used = self.handles.used[name]
            if used is True:
                total += amount
            elif used is not False:
                total += amount * used
        var = self.int_var(0, sum(whole.values()), "cost_total")
        self.model.add(var == total)
        self.handles.cost_total = var
        self.handles.cost_step = Fraction(1, step)

    def add_order(self) -> None:
        """The settings in the ranking's last order: sources, PLLs, dividers, muxes, each in
        file order (a PLL's reference divider, then its multiplier, then its fraction)."""
        scenario = self.scenario
        for group in (scenario.sources, scenario.plls, scenario.dividers, scenario.muxes):
            for item in group:
                self.handles.order.extend(self.orders.get(item.name, []))


_Serving = tuple[str, Fraction, Option, list[cp_model.IntVar], Fraction]
"""A source that can serve a rate with one option: root, budget, option, enforcing
literals, and the room the budget leaves in the allowance."""


class _Rate:
    """The variables and constraints of one rate with a tolerance."""

    def __init__(
        self,
        builder: _Builder,
        requirement: ToleranceRate,
        node: str,
        top: int,
        scale: int,
        divisor: _Divisor,
    ) -> None:
        self.builder = builder
        self.model = builder.model
        self.requirement = requirement
        self.node = node
        self.top, self.scale = top, scale
        self.divisor = divisor
        self.literals = divisor.literals
        self.decisions = divisor.decisions
        self.key = requirement.setting
        self.int_var = builder.int_var

    def allowance(self, option: Option) -> Fraction:
        """The allowance that comes with ``option`` (its own, else the rate's)."""
        return self.requirement.allowance_of(option)

    def combinations(self) -> Iterator[tuple[str, Fraction, Option, list[cp_model.IntVar]]]:
        """Each source the rate may come from with each option, and their literals."""
        handles = self.builder.handles
        for root, active in handles.roots[self.node].items():
            budget = self.builder.scenario.source(root).budget
            for option, chosen in self.literals:
                enforce = enforced(active, chosen)
                yield root, budget, option, enforce

    def build(self) -> None:
        builder, requirement = self.builder, self.requirement
        handles = builder.handles
        label = f"{requirement.peripheral} ({requirement.label})"
        loosest = max(self.allowance(option) for option, _ in self.literals)
        held = builder.guard(
            f"{self.key} allowance",
            f"{label} within {format_relative(loosest)} worst case",
            requirement=requirement,
        )
        serving: list[_Serving] = []
        for root, budget, option, enforce in self.combinations():
            room = self.allowance(option) - budget
            if room < 0 or budget >= 1:
                # this source can never serve it: forbid the combination (unless relaxed)
                if self.divisor.index is None:
                    self.model.add_bool_or([lit.Not() for lit in enforce + held])
                if not builder.relaxable or budget >= 1:
                    continue
            serving.append((root, budget, option, enforce, room))
        if self.divisor.index is not None:
            self.restrict_options(serving, held)
        if builder.relaxable:
            above = below = RELAXED_ERROR
        elif serving:
            above = max(room / (1 + budget) for _, budget, _, _, room in serving)
            below = max(room / (1 - budget) for _, budget, _, _, room in serving)
        else:
            self.model.add_bool_or([])  # no source can serve this rate
            return
        amount = handles.amount[self.node]
        top, scale = self.top, self.scale
        _check(top * amount.high, self.key)
        # |e| within its limits bounds count: scale·count within top·amount / (1 ± limit)
        low = math.ceil(Fraction(top * amount.low, scale) / (1 + above))
        divisor = self.divisor
        natural = handles.count[self.node].high * divisor.head.high * divisor.last.high
        high = (
            math.floor(Fraction(top * amount.high, scale) / (1 - below)) if below < 1 else natural
        )
        base, count = builder.counts(requirement, self.node, divisor, low, high)
        _check(scale * count.high, self.key)
        _check(top * amount.high + scale * count.high, self.key)
        # a plan inside the limits has |e| ≤ widest, so |deviation| ≤ widest · scale·count
        widest = max(above, below)
        deviation = builder.int_var(
            max(top * amount.low - scale * count.high, -math.ceil(below * scale * count.high)),
            min(top * amount.high - scale * count.low, math.ceil(above * scale * count.high)),
            f"deviation[{self.key}]",
        )
        self.model.add(deviation == top * amount.expr - scale * count.expr)
        positive = self.model.new_bool_var(f"positive[{self.key}]")
        self.model.add(deviation >= 0).only_enforce_if(positive)
        self.model.add(deviation <= -1).only_enforce_if(~positive)
        magnitude = self.int_var(
            0, max(-_lower(deviation), _upper(deviation)), f"abs_deviation[{self.key}]"
        )
        self.model.add_abs_equality(magnitude, deviation)
        denominator = Term(scale * count.expr, scale * count.low, scale * count.high)
        if divisor.index is None:
            for _, budget, _, enforce, room in serving:
                if room >= 0:
                    self.hard_limit(deviation, magnitude, denominator, budget, room, enforce + held)
        builder.neighbours(requirement, divisor, deviation, scale, base)
        error = self.error_steps(magnitude, denominator, widest)
        worst = self.worst_steps(error, positive, _upper(error))
        share_high = self.share_high(_upper(worst), serving)
        share = self.int_var(0, share_high, f"share_steps[{self.key}]")
        if divisor.index is None:
            for _, budget, option, enforce, _ in serving:
                self.share_at_least(share, worst, budget, self.allowance(option), enforce)
        else:
            self.table_limits(divisor.index, worst, share, held)
        if builder.relaxable:
            key = f"{self.key} allowance"
            handles.limits[key] = replace(handles.limits[key], share=share)
        builder.shares.append(share)
        builder.worsts.append(worst)
        handles.rates.append(
            RateHandles(
                requirement,
                self.node,
                self.decisions,
                share,
                worst,
                deviation=deviation,
                magnitude=magnitude,
                scaled_count=denominator,
            )
        )

    def restrict_options(self, serving: list[_Serving], held: list[cp_model.IntVar]) -> None:
        """With the options as a table: from each source, only the options it can serve."""
        handles = self.builder.handles
        options = self.requirement.options
        for root, active in handles.roots[self.node].items():
            allowed = [
                index
                for index, option in enumerate(options)
                if any(r == root and o is option and room >= 0 for r, _, o, _, room in serving)
            ]
            enforce = enforced(active) + held
            if not allowed:
                self.model.add_bool_or([lit.Not() for lit in enforce])
            elif len(allowed) < len(options):
                assert self.divisor.index is not None
                self.model.add_linear_expression_in_domain(
                    self.divisor.index, cp_model.Domain.from_values(allowed)
                ).only_enforce_if(enforce)

    def table_limits(
        self,
        index: cp_model.IntVar,
        worst: cp_model.IntVar,
        share: cp_model.IntVar,
        held: list[cp_model.IntVar],
    ) -> None:
        """The chosen option's allowance, looked up by its index: the worst case within it
        (X + ⌈10⁹·b⌉ ≤ ⌊10⁹·a⌋, a hair tighter than exact) and the share of it."""
        handles = self.builder.handles
        allowances = [self.allowance(option) for option in self.requirement.options]
        steps = [math.floor(ERROR_STEPS * allowance) for allowance in allowances]
        allowance_steps = self.model.new_int_var_from_domain(
            cp_model.Domain.from_values(sorted(set(steps))), f"allowance_steps[{self.key}]"
        )
        self.model.add_element(index, steps, allowance_steps)
        # S ≥ 10 000·(X + ⌈10⁹·b⌉)/(10⁹·a): 10⁹·n·S ≥ 10 000·d·(X + ⌈10⁹·b⌉) for a = n/d
        left = self.table(index, [ERROR_STEPS * a.numerator for a in allowances], "left")
        right = self.table(index, [SHARE_STEPS * a.denominator for a in allowances], "right")
        held_share = self.int_var(0, _upper(left) * _upper(share), f"share_product[{self.key}]")
        _check(_upper(held_share), self.key)
        self.model.add_multiplication_equality(held_share, [left, share])
        for root, active in handles.roots[self.node].items():
            enforce = enforced(active)
            raised = math.ceil(ERROR_STEPS * self.builder.scenario.source(root).budget)
            self.model.add(worst + raised <= allowance_steps).only_enforce_if(enforce + held)
            total = self.int_var(raised, _upper(worst) + raised, f"worst_total[{self.key},{root}]")
            self.model.add(total == worst + raised)
            product_high = _upper(right) * _upper(total)
            _check(product_high, self.key)
            product = self.int_var(0, product_high, f"worst_product[{self.key},{root}]")
            self.model.add_multiplication_equality(product, [right, total])
            self.model.add(held_share >= product).only_enforce_if(enforce)
        handles.rounded_limits.add(self.key)

    def table(self, index: cp_model.IntVar, values: list[int], name: str) -> cp_model.IntVar:
        """A variable that takes ``values[index]``."""
        var = self.model.new_int_var_from_domain(
            cp_model.Domain.from_values(sorted(set(values))), f"{name}[{self.key}]"
        )
        self.model.add_element(index, values, var)
        return var

    def hard_limit(
        self,
        deviation: cp_model.IntVar,
        magnitude: cp_model.IntVar,
        denominator: Term,
        budget: Fraction,
        room: Fraction,
        enforce: list[cp_model.IntVar],
    ) -> None:
        """|e| + b·(1 + e) ≤ a: e ≤ (a − b)/(1 + b) and −e ≤ (a − b)/(1 − b), exactly (or held
        a hair tighter when the exact coefficients would pass 64 bits)."""
        sizes = (denominator.high, _upper(magnitude))
        above = _fit(room / (1 + budget), *sizes, up=False)
        below = _fit(room / (1 - budget), *sizes, up=False)
        if (above, below) != (room / (1 + budget), room / (1 - budget)):
            self.builder.handles.rounded_limits.add(self.key)
        self.model.add(
            above.denominator * deviation <= above.numerator * denominator.expr
        ).only_enforce_if(enforce)
        self.model.add(
            -below.denominator * deviation <= below.numerator * denominator.expr
        ).only_enforce_if(enforce)

    def error_steps(
        self, magnitude: cp_model.IntVar, denominator: Term, widest: Fraction
    ) -> cp_model.IntVar:
        """E = ⌊10⁹·⌈|dev|/2^k⌉ / ⌊scale·count/2^k⌋⌋ + 1: the error in steps of 10⁻⁹, counted
        up to the next step. With k = 0 (when 64 bits allow) that is exactly ⌊10⁹·|e|⌋ + 1;
        a larger k makes it an upper bound a few steps above (the rate is listed as bounded)."""
        high = math.ceil(ERROR_STEPS * widest) + 2
        magnitude_high = _upper(magnitude)
        shift = max(0, (ERROR_STEPS * magnitude_high).bit_length() - 61)
        if shift == 0:
            rounded: Expression = magnitude
            quotient: Expression = self.builder.plain(denominator, f"error_scale[{self.key}]")
        else:
            if denominator.low >> shift < 1:
                raise ModelTooLargeError(
                    f"{self.key}: its clock spans too wide a range to bound its error in 64 bits; "
                    "narrow the candidate frequencies or the PLL ranges that feed it"
                )
            rounded = self.int_var(0, -(-magnitude_high >> shift), f"error_rounded[{self.key}]")
            self.model.add_division_equality(rounded, magnitude + (2**shift - 1), 2**shift)
            quotient = self.int_var(
                denominator.low >> shift, denominator.high >> shift, f"error_scale[{self.key}]"
            )
            self.model.add_division_equality(quotient, denominator.expr, 2**shift)
            self.builder.handles.bounded_errors.add(self.key)
        below = self.int_var(0, high, f"error_floor[{self.key}]")
        self.model.add_division_equality(below, ERROR_STEPS * rounded, quotient)
        error = self.int_var(1, high + 1, f"error_steps[{self.key}]")
        self.model.add(error == below + 1)
        return error

    def worst_steps(
        self, error: cp_model.IntVar, positive: cp_model.IntVar, error_high: int
    ) -> cp_model.IntVar:
        """X ≥ the synthesis part of the worst case, |e|·(1 + b) or |e|·(1 − b), in 10⁻⁹ steps."""
        handles = self.builder.handles
        budgets = {
            root: self.builder.scenario.source(root).budget for root in handles.roots[self.node]
        }
        raised = {root: math.ceil(ERROR_STEPS * budget) for root, budget in budgets.items()}
        lowered = {root: math.floor(ERROR_STEPS * budget) for root, budget in budgets.items()}
        high = error_high + math.ceil(error_high * max(raised.values()) / ERROR_STEPS) + 1
        worst = self.int_var(0, high, f"worst_steps[{self.key}]")
        for root, active in handles.roots[self.node].items():
            enforce = enforced(active)
            for factor, sign in ((raised[root], positive), (lowered[root], positive.Not())):
                if factor == 0:
                    self.model.add(worst >= error).only_enforce_if(enforce)
                    continue
                _check(error_high * factor + ERROR_STEPS, self.key)
                part = self.int_var(
                    0, -(-error_high * factor // ERROR_STEPS), f"budget_part[{self.key},{root}]"
                )
                if sign is positive:  # ⌈E·b⌉ added for a fast rate
                    self.model.add_division_equality(
                        part, error * factor + ERROR_STEPS - 1, ERROR_STEPS
                    )
                    self.model.add(worst >= error + part).only_enforce_if(enforce + [sign])
                else:  # ⌊E·b⌋ taken off for a slow one
                    self.model.add_division_equality(part, error * factor, ERROR_STEPS)
                    self.model.add(worst >= error - part).only_enforce_if(enforce + [sign])
        return worst

    def share_high(self, worst_high: int, serving: list[_Serving]) -> int:
        """Largest share the model must hold for this rate, in steps."""
        return (
            max(
                math.ceil(
                    SHARE_STEPS
                    * Fraction(worst_high + math.ceil(ERROR_STEPS * budget), ERROR_STEPS)
                    / self.allowance(option)
                )
                for _, budget, option, _, _ in serving
            )
            + 1
        )

    def share_at_least(
        self,
        share: cp_model.IntVar,
        worst: cp_model.IntVar,
        budget: Fraction,
        allowance: Fraction,
        enforce: list[cp_model.IntVar],
    ) -> None:
        """S ≥ 10 000·(X + ⌈10⁹·b⌉)/(10⁹·a): the worst case as a share of the allowance."""
        raised = math.ceil(ERROR_STEPS * budget)
        sizes = (ERROR_STEPS * _upper(share), SHARE_STEPS * (_upper(worst) + raised))
        fitted = _fit(allowance, *sizes, up=False)
        if fitted != allowance:
            self.builder.handles.bounded_errors.add(self.key)
        self.model.add(
            ERROR_STEPS * fitted.numerator * share
            >= SHARE_STEPS * fitted.denominator * (worst + raised)
        ).only_enforce_if(enforce)


def _shared_prescaler(options: tuple[Option, ...]) -> range | None:
    """The prescaler range every option multiplies by its own factor, when there is one."""
    first = options[0]
    values = first.divisors
    if not isinstance(values, range) or values.start % first.factor or values.step % first.factor:
        return None
    prescaler = range(
        values.start // first.factor, values[-1] // first.factor + 1, values.step // first.factor
    )
    if any(option.divisors != times(prescaler, option.factor) for option in options):
        return None
    return prescaler


def _fit(value: Fraction, numerator_size: int, denominator_size: int, *, up: bool) -> Fraction:
    """``value`` itself when its numerator × ``numerator_size`` and its denominator ×
    ``denominator_size`` stay under LIMIT; else the nearest fraction that fits on the safe
    side (at or above ``value`` with ``up``, at or below it without)."""
    most_numerator = (LIMIT - 1) // max(numerator_size, 1)
    most_denominator = (LIMIT - 1) // max(denominator_size, 1)
    if value.numerator <= most_numerator and value.denominator <= most_denominator:
        return value
    round_ = math.ceil if up else math.floor
    fitted = Fraction(round_(value * most_denominator), most_denominator)
    if fitted.numerator > most_numerator:  # the numerator binds: N / ⌊N/value⌋ or ⌈N/value⌉
        spread = math.floor(most_numerator / value) if up else math.ceil(most_numerator / value)
        fitted = Fraction(most_numerator, max(spread, 1))
    if fitted <= 0 or fitted.numerator > most_numerator or fitted.denominator > most_denominator:
        raise ModelTooLargeError(
            f"the model would need integers past 62 bits (a factor of {float(value):.6g} on "
            f"terms of {numerator_size.bit_length()} and {denominator_size.bit_length()} bits); "
            "narrow the ranges, the fraction bits or the candidate frequencies"
        )
    return fitted


def _common_unit(frequencies: Iterable[Fraction]) -> Fraction:
    """The largest exact unit that every candidate frequency is a whole multiple of."""
    numerator, denominator = 0, 1
    for frequency in frequencies:
        numerator = math.gcd(numerator, frequency.numerator)
        denominator = math.lcm(denominator, frequency.denominator)
    return Fraction(numerator, denominator)


def _check(value: int, where: str) -> None:
    """Refuse a term past LIMIT; ``where`` names the model's own term."""
    if abs(value) >= LIMIT:
        raise ModelTooLargeError(
            f"the model would need integers of {value.bit_length()} bits for {where} (at most "
            "62); narrow the ranges, the fraction bits or the candidate frequencies"
        )


def _whole_multiple(frequency: Fraction, unit: Fraction) -> int:
    """frequency / unit, known to be whole, without Fraction's slow division."""
    return (frequency.numerator * unit.denominator) // (frequency.denominator * unit.numerator)


def _domain(values: Divisors) -> cp_model.Domain:
    if isinstance(values, range) and values.step == 1:
        return cp_model.Domain(values.start, values.stop - 1)
    return cp_model.Domain.from_values(list(values))


def _lower(var: cp_model.IntVar) -> int:
    return int(list(var.proto.domain)[0])


def _upper(var: cp_model.IntVar) -> int:
    """Largest value of ``var`` (the proto's repeated field does not index from the end)."""
    return int(list(var.proto.domain)[-1])
