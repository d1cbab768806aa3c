"""The CP-SAT model of one scenario: exact integer arithmetic on scaled frequencies.

Every oscillator frequency is ``unit × x`` with ``x`` an integer variable over the
source's candidates (``unit`` is the exact greatest common divisor of all
candidates). Every clock is then ``unit × amount / count``: ``amount`` grows with
PLL multipliers, ``count`` with reference dividers and dividers. Limits become
linear inequalities between the two, and a rate requirement's synthesis error is
the exact integer ``deviation = unit·target-denominator·numerator·amount −
target·unit-denominator·count·divisor``.

The objective is the worst share of an allowance, counted in steps of
1/``SHARE_STEPS``; synthesis errors enter it rounded up to 10**-``precision``
(``precision`` as fine as 64-bit integers allow, at most 9 digits). The exact
figures are recomputed afterwards by :mod:`clockplan.evaluate`.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field
from fractions import Fraction

from ortools.sat.python import cp_model

from clockplan.errors import ModelTooLargeError
from clockplan.interfaces.base import Divisors, Option, Requirement
from clockplan.plan import Plan, pll_keys
from clockplan.quantities import format_hz, format_relative
from clockplan.scenario import Scenario
from clockplan.tree import evaluation_order

__all__ = ["ClockModel", "build_model", "SHARE_STEPS", "LIMIT"]

SHARE_STEPS = 10_000
"""The objective counts the worst share of an allowance in steps of 1/10 000."""
LIMIT = 2**62
"""Largest magnitude any term of the model may reach (CP-SAT refuses overflow past 2**63)."""
MAX_PRECISION = 9
RELAXED_ERROR = Fraction(1, 2)
"""In a relaxable model every rate still stays within 50 % of its target (a modelling bound)."""


@dataclass(frozen=True)
class _Term:
    """A non-negative integer expression of the model with its exact bounds."""

    expr: cp_model.LinearExprT
    low: int
    high: int

    @property
    def constant(self) -> bool:
        return self.low == self.high


@dataclass
class _Rate:
    """The variables of one requirement."""

    requirement: Requirement
    node: str
    count: _Term
    deviation_bound: int
    scale: int
    """Denominator of the relative error: relative error = deviation / (scale · count)."""
    deviation: cp_model.LinearExprT
    options: list[tuple[Option, cp_model.LinearExprT | bool]]
    """Each option with the literal that is true when it is chosen (True when alone)."""
    error_high: Fraction
    """Largest relative synthesis error the model holds for this rate."""

    def share_high(self, budgets: list[Fraction], relaxable: bool) -> int:
        """Largest share of an allowance (in steps) the model holds for this rate."""
        if not relaxable:
            return SHARE_STEPS
        narrowest = min(option.allowance for option, _ in self.options)
        return math.ceil(SHARE_STEPS * (self.error_high + max(budgets)) / narrowest) + 1


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


@dataclass
class ClockModel:
    """A built model with handles to read a plan back."""

    scenario: Scenario
    model: cp_model.CpModel
    source_units: dict[str, Fraction]
    """Each source's frequency is its unit × its integer variable."""
    precisions: dict[str, int]
    """Digits of each rate's synthesis error in the objective (10**-p, rounded up)."""
    worst: cp_model.IntVar
    """Worst share of an allowance in steps of 1/SHARE_STEPS (the primary objective)."""
    source_values: dict[str, cp_model.IntVar] = field(default_factory=dict)
    settings: dict[str, cp_model.IntVar] = field(default_factory=dict)
    mux_inputs: dict[str, tuple[str, ...]] = field(default_factory=dict)
    fastest: list[cp_model.IntVar] = field(default_factory=list)
    """Floors of the clocks marked "fastest", hertz (the secondary objective, maximised)."""
    ceilings: list[cp_model.IntVar] = field(default_factory=list)
    """Floors of the rates under a ceiling, hertz (maximised after the fastest clocks)."""
    shares: list[cp_model.IntVar] = field(default_factory=list)
    """Each rate's share of its allowance in steps (their sum is the third objective)."""
    rounded_limits: set[str] = field(default_factory=set)
    """Rates whose hard limit had to use the rounded-up error (64-bit room ran out)."""
    limits: dict[str, Limit] = field(default_factory=dict)
    """Guarded limits by key (only in a relaxable model), in the order they were built."""
    cost: cp_model.LinearExprT | None = None
    """Total cost of the sources in use, in steps of ``cost_step`` (when costs are given)."""
    cost_step: Fraction = Fraction(1)
    preference: cp_model.IntVar | None = None
    """Position of the chosen frequency in the first choosing source's list (last tie-breaker)."""

    def tie_breakers(self) -> list[cp_model.LinearExprT]:
        """Expressions to maximise in turn once the worst share is held, most important first.

        The lower total cost of the sources in use (when costs are given and the scenario
        does not rank by cost first), clocks marked "fastest", then rates under a ceiling
        (both as fast as allowed), the smallest sum of shares, the earlier candidate
        frequency, the smaller settings.
        """
        stages: list[cp_model.LinearExprT] = []
        if self.cost is not None and self.scenario.rank_by != "cost":
            stages.append(-self.cost)
        for group in (self.fastest, self.ceilings):
            if group:
                stages.append(sum(group))
        if len(self.shares) > 1:
            stages.append(-sum(self.shares))
        if self.preference is not None:
            stages.append(-self.preference)
        if self.settings:
            stages.append(-sum(self.settings.values()))
        return stages

    def read_plan(self, solver: cp_model.CpSolver) -> Plan:
        """The plan in the solver's current solution."""
        sources = {
            name: self.source_units[name] * solver.value(var)
            for name, var in self.source_values.items()
        }
        settings: dict[str, int | str] = {}
        for key, var in self.settings.items():
            value = int(solver.value(var))
            node = key.rsplit(".", 1)[0]
            settings[key] = self.mux_inputs[node][value] if node in self.mux_inputs else value
        return Plan(sources, settings)

    def forbid_sources(self, chosen: Mapping[str, Fraction]) -> None:
        """Exclude this combination of oscillator frequencies (to rank the next one)."""
        differs = []
        for name, frequency in chosen.items():
            var = self.source_values[name]
            value = _whole_multiple(frequency, self.source_units[name])
            if len(self.scenario.source(name).candidates) == 1:
                continue
            flag = self.model.new_bool_var(f"differs[{name}]")
            self.model.add(var != value).only_enforce_if(flag)
            self.model.add(var == value).only_enforce_if(~flag)
            differs.append(flag)
        if differs:
            self.model.add_bool_or(differs)
        else:
            self.model.add_bool_or([])  # nothing left to choose: no further plan exists


def build_model(scenario: Scenario, *, relaxable: bool = False) -> ClockModel:
    """Translate ``scenario`` into a CP-SAT model.

    With ``relaxable`` every limit (allowance, PFD, VCO, min, max, ceiling) is guarded
    by a literal in :attr:`ClockModel.limits`, so that an explanation can switch limits
    off one by one. Every rate then stays within 50 % of its target (RELAXED_ERROR), and
    shares may exceed one allowance.
    """
    return _Builder(scenario, relaxable).build()


class _Builder:
    def __init__(self, scenario: Scenario, relaxable: bool = False) -> None:
        self.scenario = scenario
        self.relaxable = relaxable
        self.uses: dict[str, list[cp_model.LinearExprT | bool]] = {}
        """For each source, the literals under which some rate is fed from it."""
        self.model = cp_model.CpModel()
        self.units: dict[str, Fraction] = {}
        """Each clock is units[node] × amount / count."""
        self.amount: dict[str, _Term] = {}
        self.count: dict[str, _Term] = {}
        self.roots: dict[str, dict[str, cp_model.LinearExprT | bool]] = {}
        self.rates: list[_Rate] = []
        self.handles = ClockModel(
            scenario, self.model, {}, {}, self.model.new_int_var(0, 0, "unset")
        )

    def guard(self, key: str, text: str, **extra: object) -> list[cp_model.IntVar]:
        """Enforcement literals for one limit: none normally, its guard when relaxable."""
        if not self.relaxable:
            return []
        if key not in self.handles.limits:
            literal = self.model.new_bool_var(f"holds[{key}]")
            self.handles.limits[key] = Limit(key, text, literal, **extra)  # type: ignore[arg-type]
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
        domain = cp_model.Domain.from_values(list(values))
        return self.model.new_int_var_from_domain(domain, name)

    def product(self, left: _Term, right: _Term, name: str) -> _Term:
        """left × right as a term: linear when one side is constant, else a new variable."""
        low, high = left.low * right.low, left.high * right.high
        _check(high, name)
        if left.constant:
            return _Term(left.low * right.expr, low, high)
        if right.constant:
            return _Term(right.low * left.expr, low, high)
        var = self.model.new_int_var(low, high, name)
        self.model.add_multiplication_equality(var, [left.expr, right.expr])
        return _Term(var, low, high)

    def bounded(self, term: _Term, low: int, high: int, name: str) -> _Term:
        """The same value with tighter bounds (a fresh variable when it pays)."""
        low, high = max(low, term.low), min(high, term.high)
        if low > high:
            low, high = term.low, term.low - 1  # empty: the model is infeasible, CP-SAT says so
        if term.constant:
            if low > high:
                self.model.add_bool_or([])
            return term
        var = self.model.new_int_var(low, max(low, high), name) if low <= high else None
        if var is None:
            self.model.add_bool_or([])
            return term
        self.model.add(var == term.expr)
        return _Term(var, low, high)

    # -- limits --------------------------------------------------------------------------------

    def frequency_between(
        self,
        node: str,
        unit: Fraction,
        amount: _Term,
        count: _Term,
        low: Fraction | None,
        high: Fraction | None,
    ) -> None:
        """low ≤ unit · amount / count ≤ high, as exact integer inequalities."""
        for bound, sense in ((low, 1), (high, -1)):
            if bound is None or bound <= 0 and sense == 1:
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

    def build(self) -> ClockModel:
        scenario = self.scenario
        plls = {pll.name: pll for pll in scenario.plls}
        dividers = {divider.name: divider for divider in scenario.dividers}
        muxes = {mux.name: mux for mux in scenario.muxes}
        for name in evaluation_order(scenario):
            if name in plls:
                with self.located(f"plls.{name}"):
                    self.add_pll(plls[name])
            elif name in dividers:
                with self.located(f"dividers.{name}"):
                    self.add_divider(dividers[name])
            elif name in muxes:
                with self.located(f"muxes.{name}"):
                    self.add_mux(muxes[name])
            else:
                with self.located(f"sources.{name}.choose"):
                    self.add_source(name)
        for peripheral in scenario.peripherals:
            with self.located(f"peripherals.{peripheral.name}"):
                for requirement in peripheral.requirements:
                    self.add_rate(requirement, peripheral.clock)
        self.add_objective()
        self.add_cost()
        return self.handles

    def add_cost(self) -> None:
        """Total cost of the sources some rate uses, in the scenario's smallest cost step."""
        costs = {s.name: s.cost for s in self.scenario.sources if s.cost is not None}
        if not costs:
            return
        step = math.lcm(*(cost.denominator for cost in costs.values()))
        total: cp_model.LinearExprT = 0
        for name, cost in costs.items():
            ways = self.uses.get(name, [])
            if any(way is True for way in ways):
                total += int(cost * step)
            elif ways:
                used = self.model.new_bool_var(f"uses[{name}]")
                self.model.add_max_equality(used, ways)
                total += int(cost * step) * used
        self.handles.cost = total
        self.handles.cost_step = Fraction(1, step)

    @contextmanager
    def located(self, key: str) -> Iterator[None]:
        """Name the scenario file and ``key`` in any size error raised inside."""
        try:
            yield
        except ModelTooLargeError as error:
            if str(error).startswith(f"{self.scenario.file}: "):
                raise
            raise ModelTooLargeError(f"{self.scenario.file}: {key}: {error}") from None

    def add_source(self, name: str) -> None:
        source = self.scenario.source(name)
        unit = _common_unit(source.candidates)
        self.units[name] = unit
        self.handles.source_units[name] = unit
        order = [_whole_multiple(frequency, unit) for frequency in source.candidates]
        values = sorted(set(order))
        _check(values[-1], name)
        var = self.model.new_int_var_from_domain(cp_model.Domain.from_values(values), f"x[{name}]")
        self.handles.source_values[name] = var
        if len(values) > 1 and self.handles.preference is None:
            position = self.model.new_int_var(0, len(order) - 1, f"preference[{name}]")
            self.model.add_element(position, order, var)
            self.handles.preference = position
        self.amount[name] = _Term(var, values[0], values[-1])
        self.count[name] = _Term(1, 1, 1)
        self.roots[name] = {name: True}

    def add_pll(self, pll) -> None:  # type: ignore[no-untyped-def]
        reference_key, multiplier_key, fraction_key = pll_keys(pll.name)
        reference = self.choice(reference_key, pll.reference_divider)
        whole = self.choice(multiplier_key, pll.multiplier)
        self.handles.settings[reference_key] = reference
        self.handles.settings[multiplier_key] = whole
        modulus = 2**pll.fraction_bits
        feedback = _Term(
            modulus * whole, modulus * min(pll.multiplier), modulus * max(pll.multiplier)
        )
        if pll.fraction_bits:
            fraction = self.model.new_int_var(0, modulus - 1, fraction_key)
            self.handles.settings[fraction_key] = fraction
            feedback = _Term(feedback.expr + fraction, feedback.low, feedback.high + modulus - 1)
        amount_in, count_in = self.amount[pll.input], self.count[pll.input]
        divided = self.product(
            count_in,
            _Term(reference, min(pll.reference_divider), max(pll.reference_divider)),
            f"count_pfd[{pll.name}]",
        )
        unit = self.units[pll.input]
        self.frequency_between(f"{pll.name} PFD", unit, amount_in, divided, *pll.pfd)
        amount = self.product(amount_in, feedback, f"amount[{pll.name}]")
        count = self.product(divided, _Term(modulus, modulus, modulus), f"count[{pll.name}]")
        self.frequency_between(f"{pll.name} VCO", unit, amount, count, *pll.vco)
        self.units[pll.name] = unit
        self.amount[pll.name], self.count[pll.name] = amount, count
        self.roots[pll.name] = self.roots[pll.input]

    def add_divider(self, divider) -> None:  # type: ignore[no-untyped-def]
        key = f"{divider.name}.divide"
        value = self.choice(key, divider.divide)
        self.handles.settings[key] = value
        count = self.product(
            self.count[divider.input],
            _Term(value, min(divider.divide), max(divider.divide)),
            f"count[{divider.name}]",
        )
        amount = self.amount[divider.input]
        unit = self.units[divider.input]
        self.units[divider.name] = unit
        self.frequency_between(divider.name, unit, amount, count, divider.minimum, divider.maximum)
        self.amount[divider.name], self.count[divider.name] = amount, count
        self.roots[divider.name] = self.roots[divider.input]
        if divider.fastest:
            self.handles.fastest.append(
                self.floor_hertz(divider.name, unit, amount, count, divider.maximum)
            )

    def add_mux(self, mux) -> None:  # type: ignore[no-untyped-def]
        key = f"{mux.name}.input"
        selector = self.model.new_int_var(0, len(mux.inputs) - 1, key)
        self.handles.settings[key] = selector
        self.handles.mux_inputs[mux.name] = mux.inputs
        # a common unit for the inputs: each input's amount scaled by a whole factor
        unit = _common_unit(self.units[name] for name in mux.inputs)
        self.units[mux.name] = unit
        amounts = []
        for name in mux.inputs:
            factor = int(self.units[name] / unit)
            term = self.amount[name]
            _check(factor * term.high, mux.name)
            amounts.append(_Term(factor * term.expr, factor * term.low, factor * term.high))
        counts = [self.count[name] for name in mux.inputs]
        amount_var = self.model.new_int_var(
            min(t.low for t in amounts), max(t.high for t in amounts), f"amount[{mux.name}]"
        )
        count_var = self.model.new_int_var(
            min(t.low for t in counts), max(t.high for t in counts), f"count[{mux.name}]"
        )
        roots: dict[str, list[cp_model.LinearExprT]] = {}
        for index, name in enumerate(mux.inputs):
            chosen = self.model.new_bool_var(f"{mux.name}.chooses[{name}]")
            self.model.add(selector == index).only_enforce_if(chosen)
            self.model.add(selector != index).only_enforce_if(~chosen)
            self.model.add(amount_var == amounts[index].expr).only_enforce_if(chosen)
            self.model.add(count_var == counts[index].expr).only_enforce_if(chosen)
            for root, active in self.roots[name].items():
                if active is True:
                    roots.setdefault(root, []).append(chosen)
                else:
                    both = self.model.new_bool_var(f"{mux.name}.via[{name},{root}]")
                    self.model.add_multiplication_equality(both, [chosen, active])
                    roots.setdefault(root, []).append(both)
        amount = _Term(amount_var, _lower(amount_var), _upper(amount_var))
        count = _Term(count_var, _lower(count_var), _upper(count_var))
        self.frequency_between(mux.name, unit, amount, count, None, mux.maximum)
        self.amount[mux.name], self.count[mux.name] = amount, count
        self.roots[mux.name] = {}
        for root, ways in roots.items():
            flag = self.model.new_bool_var(f"{mux.name}.from[{root}]")
            self.model.add(flag == sum(ways))
            self.roots[mux.name][root] = flag

    def floor_hertz(
        self, name: str, unit: Fraction, amount: _Term, count: _Term, maximum: Fraction | None
    ) -> cp_model.IntVar:
        """A variable at most unit · amount / count hertz: the clock's floor once maximised."""
        high = maximum if maximum is not None else unit * Fraction(amount.high, count.low)
        hertz = self.model.new_int_var(0, math.floor(high), f"hertz[{name}]")
        scaled = self.product(_Term(hertz, 0, math.floor(high)), count, f"hertz_count[{name}]")
        _check(unit.denominator * scaled.high, name)
        _check(unit.numerator * amount.high, name)
        self.model.add(unit.denominator * scaled.expr <= unit.numerator * amount.expr)
        return hertz

    # -- rates ---------------------------------------------------------------------------------

    def add_rate(self, requirement: Requirement, node: str) -> None:
        amount, count_in = self.amount[node], self.count[node]
        target = requirement.target
        choices = requirement.choices
        widest = max(option.allowance for option in choices)
        # achieved / target = (unit·numerator·amount) / (target·count·divisor)
        unit = self.units[node]
        top = unit.numerator * target.denominator * requirement.numerator
        scale = target.numerator * unit.denominator
        _check(top * amount.high, requirement.setting)
        if requirement.stages:
            literals: list[cp_model.LinearExprT | bool] = [True]
            divisor_term = self.stage_product(requirement)
        else:
            if len(choices) == 1:
                divisor = self.choice(requirement.setting, choices[0].divisors)
                literals = [True]
            else:
                domains = [_domain(option.divisors) for option in choices]
                union = domains[0]
                for domain in domains[1:]:
                    union = union.union_with(domain)
                divisor = self.model.new_int_var_from_domain(union, requirement.setting)
                literals = self.option_literals(requirement, divisor, domains)
            self.handles.settings[requirement.setting] = divisor
            low = min(min(option.divisors) for option in choices)
            high = max(max(option.divisors) for option in choices)
            divisor_term = _Term(divisor, low, high)
        count = self.product(count_in, divisor_term, f"count[{requirement.setting}]")
        for root, active in self.roots[node].items():
            self.uses.setdefault(root, []).append(active)
        if requirement.ceiling:
            self.add_ceiling(requirement, node, amount, count, top, scale)
            return
        if self.relaxable:  # room to show how far an allowance must move
            widest = max(widest, RELAXED_ERROR)
        # |error| ≤ allowance bounds the count: scale·count within top·amount / (1 ± allowance).
        low = math.ceil(Fraction(top * amount.low, scale) / (1 + widest))
        high = (
            math.floor(Fraction(top * amount.high, scale) / (1 - widest))
            if widest < 1
            else count.high
        )
        count = self.bounded(count, low, high, f"count_bounded[{requirement.setting}]")
        # the hard limit keeps |deviation| ≤ allowance · scale · count
        bound = math.ceil(widest * scale * count.high)
        error_high = widest
        _check(scale * count.high, requirement.setting)
        _check(bound, requirement.setting)
        deviation = top * amount.expr - scale * count.expr
        options = list(zip(choices, literals, strict=True))
        self.rates.append(
            _Rate(requirement, node, count, bound, scale, deviation, options, error_high)
        )

    def stage_product(self, requirement: Requirement) -> _Term:
        """The divisor as the product of the requirement's named stages, each a setting."""
        product: _Term = _Term(1, 1, 1)
        for name, values in requirement.stages:
            key = requirement.stage_setting(name)
            stage = self.choice(key, values)
            self.handles.settings[key] = stage
            product = self.product(product, _Term(stage, min(values), max(values)), f"{key}*")
        return product

    def option_literals(
        self, requirement: Requirement, divisor: cp_model.IntVar, domains: list[cp_model.Domain]
    ) -> list[cp_model.LinearExprT | bool]:
        """One literal per option (exactly one true), each holding the divisor to its values."""
        if len(domains) == 1:
            return [True]
        index = self.model.new_int_var(0, len(domains) - 1, requirement.option_setting)
        self.handles.settings[requirement.option_setting] = index
        literals: list[cp_model.LinearExprT | bool] = []
        for position, domain in enumerate(domains):
            chosen = self.model.new_bool_var(f"{requirement.option_setting}[{position}]")
            self.model.add(index == position).only_enforce_if(chosen)
            self.model.add(index != position).only_enforce_if(~chosen)
            self.model.add_linear_expression_in_domain(divisor, domain).only_enforce_if(chosen)
            literals.append(chosen)
        return literals

    def add_ceiling(
        self, requirement: Requirement, node: str, amount: _Term, count: _Term, top: int, scale: int
    ) -> None:
        """rate·(1 + budget) ≤ maximum (and rate·(1 − budget) ≥ floor); as fast as allowed."""
        label = f"{requirement.peripheral} ({requirement.label})"
        held = self.guard(
            f"{requirement.setting} at most",
            f"{label} at most {format_hz(requirement.target)} with its source's budget",
            requirement=requirement,
        )
        kept = []
        if requirement.floor is not None:
            kept = self.guard(
                f"{requirement.setting} at least",
                f"{label} at least {format_hz(requirement.floor)} with its source's budget",
                requirement=requirement,
            )
        for root, active in self.roots[node].items():
            budget = self.scenario.source(root).budget
            enforce = [] if active is True else [active]
            fast = 1 + budget
            _check(fast.numerator * top * amount.high, requirement.setting)
            _check(fast.denominator * scale * count.high, requirement.setting)
            self.model.add(
                fast.numerator * top * amount.expr <= fast.denominator * scale * count.expr
            ).only_enforce_if(enforce + held)
            if requirement.floor is not None:
                slow = (1 - budget) * requirement.floor.denominator * requirement.target.numerator
                wanted = requirement.floor.numerator * requirement.target.denominator
                left, right = slow.numerator * top, slow.denominator * wanted * scale
                _check(left * amount.high, requirement.setting)
                _check(right * count.high, requirement.setting)
                self.model.add(left * amount.expr >= right * count.expr).only_enforce_if(
                    enforce + kept
                )
        achieved = _Term(
            requirement.numerator * amount.expr,
            requirement.numerator * amount.low,
            requirement.numerator * amount.high,
        )
        self.handles.ceilings.append(
            self.floor_hertz(
                requirement.setting, self.units[node], achieved, count, requirement.target
            )
        )

    def add_objective(self) -> None:
        top_share = max((self.share_high(rate) for rate in self.rates), default=SHARE_STEPS)
        worst = self.model.new_int_var(0, top_share, "worst_share_steps")
        self.handles.worst = worst
        for rate in self.rates:
            with self.located(f"peripherals.{rate.requirement.peripheral}"):
                self.add_rate_objective(rate, worst)

    def add_rate_objective(self, rate: _Rate, worst: cp_model.IntVar) -> None:
        """The rate's share of its allowance, its rounded-up error and its hard limit."""
        requirement = rate.requirement
        precision = self.choose_precision(rate)
        self.handles.precisions[requirement.setting] = precision
        power = 10**precision
        share = self.model.new_int_var(
            0, self.share_high(rate), f"share_steps[{requirement.setting}]"
        )
        label = f"{requirement.peripheral} ({requirement.label})"
        widest_allowance = max(option.allowance for option, _ in rate.options)
        held = self.guard(
            f"{requirement.setting} allowance",
            f"{label} within {format_relative(widest_allowance)} worst case",
            requirement=requirement,
            share=share,
        )
        self.model.add(share <= worst)
        self.handles.shares.append(share)
        magnitude = self.model.new_int_var(
            0, rate.deviation_bound, f"abs_deviation[{requirement.setting}]"
        )
        self.model.add_abs_equality(magnitude, rate.deviation)
        denominator = rate.scale * rate.count.expr
        steps_high = self.steps_high(rate, power)
        steps = self.model.new_int_var(0, steps_high, f"error_steps[{requirement.setting}]")
        # steps = ceil(power · |deviation| / (scale · count)): the error rounded up.
        self.model.add_division_equality(steps, power * magnitude + denominator - 1, denominator)
        for root, active in self.roots[rate.node].items():
            budget = self.scenario.source(root).budget
            for option, chosen in rate.options:
                enforce = [lit for lit in (active, chosen) if lit is not True]
                room = option.allowance - budget
                if room < 0:  # this source can never serve it
                    self.model.add_bool_or([~lit for lit in enforce + held])
                elif (
                    max(
                        room.denominator * rate.deviation_bound,
                        room.numerator * rate.scale * rate.count.high,
                    )
                    < LIMIT
                ):  # hard: |error| ≤ allowance − budget, exactly
                    self.model.add(
                        room.denominator * magnitude <= room.numerator * denominator
                    ).only_enforce_if(enforce + held)
                else:  # too wide for 64 bits: on the error rounded up (stricter by < 1 step)
                    self.model.add(steps <= math.floor(room * power)).only_enforce_if(
                        enforce + held
                    )
                    self.handles.rounded_limits.add(requirement.setting)
                # share ≥ SHARE_STEPS · (steps/power + budget) / allowance, exactly
                allowance = option.allowance
                left = allowance.numerator * budget.denominator * power
                right_steps = SHARE_STEPS * allowance.denominator * budget.denominator
                right_const = SHARE_STEPS * allowance.denominator * budget.numerator * power
                self.model.add(left * share >= right_steps * steps + right_const).only_enforce_if(
                    enforce
                )

    def steps_high(self, rate: _Rate, power: int) -> int:
        """Largest synthesis error the model must hold, in steps of 1/power."""
        return math.ceil(power * rate.error_high) + 1

    def share_high(self, rate: _Rate) -> int:
        budgets = [self.scenario.source(root).budget for root in self.roots[rate.node]]
        return rate.share_high(budgets, self.relaxable)

    def choose_precision(self, rate: _Rate) -> int:
        """The finest 10**-p for this rate's synthesis error that keeps its terms below LIMIT."""
        for precision in range(MAX_PRECISION, -1, -1):
            power = 10**precision
            if power * rate.deviation_bound + rate.scale * rate.count.high >= LIMIT:
                continue
            steps_high = self.steps_high(rate, power)
            fits = True
            for root in self.roots[rate.node]:
                budget = self.scenario.source(root).budget
                for option, _ in rate.options:
                    allowance = option.allowance
                    terms = (
                        allowance.numerator * budget.denominator * power * self.share_high(rate),
                        SHARE_STEPS * allowance.denominator * budget.denominator * steps_high
                        + SHARE_STEPS * allowance.denominator * budget.numerator * power,
                    )
                    fits = fits and max(terms) < LIMIT
            if fits:
                return precision
        raise ModelTooLargeError(
            f"{rate.requirement.setting}: the numbers are too large for 64-bit integers even at "
            "whole-unit error precision; narrow the divider ranges or fraction bits"
        )


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
