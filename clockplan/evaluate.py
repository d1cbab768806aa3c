"""Exact recomputation of a plan from its settings, independent of the search.

It walks the clock tree in order with ``Fraction`` arithmetic, checks every range
and allowed value, and scores every peripheral rate. It shares no code with
:mod:`clockplan.solve`; the tests run it on every plan the search returns.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction

from clockplan._frozen import frozen
from clockplan.peripherals.base import Option, Options, Requirement, Stages, smallest
from clockplan.plan import Plan, divider_key, mux_key, pll_keys
from clockplan.quantities import format_hz
from clockplan.scenario import Divider, Mux, Pll, Scenario
from clockplan.sources import Source
from clockplan.topology import evaluation_order

__all__ = ["RateCheck", "Evaluation", "evaluate_plan"]


@dataclass(frozen=True)
class RateCheck:
    """How one required rate fares in a plan."""

    requirement: Requirement
    input_clock: Fraction
    """Input clock feeding the peripheral, hertz."""
    divisor: int
    achieved: Fraction
    """Rate produced, hertz (or baud)."""
    source: str
    """The oscillator this rate comes from."""
    source_budget: Fraction
    """That oscillator's worst-case relative error."""
    source_budget_rss: float
    option: Option
    """The way the rate is made (its divisors and allowance)."""

    @property
    def allowance(self) -> Fraction | None:
        """Largest worst-case relative error allowed with the chosen option (None: a maximum)."""
        return self.requirement.allowance_of(self.option)

    @property
    def error(self) -> Fraction:
        """Synthesis error: achieved / target − 1, exact (for a ceiling: below the maximum)."""
        return self.requirement.error(self.achieved)

    @property
    def worst_case(self) -> Fraction:
        """The largest deviation the source's budget can push the rate to (for a ceiling, the
        fastest rate it reaches, relative to the maximum)."""
        return self.requirement.worst_case(self.achieved, self.source_budget)

    @property
    def worst_case_rss(self) -> float:
        """The same with the source's RSS budget in place of its sum (a statistical figure)."""
        error = float(self.error)
        return abs(error) + self.source_budget_rss * (1 + error)

    @property
    def share(self) -> Fraction:
        """Worst case as a share of the allowance (for a ceiling: of the maximum); above 1 fails."""
        return self.requirement.share(self.achieved, self.source_budget, self.option)

    @property
    def margin(self) -> Fraction:
        """Room left: allowance − worst case, or for a ceiling how far below the maximum."""
        return self.requirement.margin(self.achieved, self.source_budget, self.option)

    @property
    def passes(self) -> bool:
        """Whether the worst case fits inside the allowance (or the window, for a ceiling)."""
        return self.requirement.passes(self.achieved, self.source_budget, self.option)

    @property
    def at_risk(self) -> bool:
        """Whether it passes with so little room left that it deserves a second look."""
        return self.passes and self.requirement.at_risk(self.share)

    @property
    def limit_text(self) -> str:
        """What the rate must meet, in words: its allowance, or ``"≤ 25 MHz"``."""
        return self.requirement.limit_text(self.option)

    @property
    def worst_case_text(self) -> str:
        """The worst case as the tables print it (signed for a ceiling)."""
        return self.requirement.worst_case_text(self.worst_case)

    def standing_text(self, *, brief: bool = False) -> str:
        """Where the rate stands against its limit, in one clause."""
        return self.requirement.standing_text(
            self.achieved, self.source_budget, self.option, brief=brief
        )

    def standing_phrases(self, *, brief: bool = False) -> tuple[str, ...]:
        """The same clause cut into phrases that a narrow view may put on separate lines."""
        return self.requirement.standing_phrases(
            self.achieved, self.source_budget, self.option, brief=brief
        )


@dataclass(frozen=True)
class Evaluation:
    """Every clock's exact frequency, every rate's check, and any broken limit."""

    clocks: Mapping[str, Fraction]
    roots: Mapping[str, str]
    """For each clock, the oscillator it comes from."""
    checks: tuple[RateCheck, ...]
    violations: tuple[str, ...]
    """Broken limits and disallowed settings, in words."""
    detectors: Mapping[str, Fraction] = field(default_factory=dict)
    """Each PLL's phase-detector (PFD) frequency: its input over its reference divider. Its
    VCO frequency is its clock."""

    def __post_init__(self) -> None:
        object.__setattr__(self, "clocks", frozen(self.clocks))
        object.__setattr__(self, "roots", frozen(self.roots))
        object.__setattr__(self, "detectors", frozen(self.detectors))

    @property
    def worst(self) -> RateCheck | None:
        """The check with the largest share of its allowance among the rates ranked by share
        (no ceiling: those are ranked by speed), the first one on ties."""
        ranked = [check for check in self.checks if check.requirement.ranked_by_share]
        return max(ranked, key=lambda check: check.share, default=None)

    @property
    def worst_share(self) -> Fraction:
        """The plan's figure of merit: its worst share of an allowance."""
        worst = self.worst
        return worst.share if worst else Fraction(0)

    @property
    def feasible(self) -> bool:
        """No broken limit and every rate inside its allowance."""
        return not self.violations and all(check.passes for check in self.checks)


def evaluate_plan(scenario: Scenario, plan: Plan) -> Evaluation:
    """Recompute ``plan`` on ``scenario`` exactly."""
    clocks: dict[str, Fraction] = {}
    roots: dict[str, str] = {}
    detectors: dict[str, Fraction] = {}
    violations: list[str] = []
    for name in evaluation_order(scenario):
        node = scenario.node(name)
        if isinstance(node, Source):
            if name in plan.sources:
                clocks[name] = plan.sources[name]
                if plan.sources[name] not in node.candidates:
                    violations.append(
                        f"{name}: {plan.sources[name]} Hz is not among its candidates"
                    )
            else:
                violations.append(f"{name}: the plan gives this oscillator no frequency")
                clocks[name] = node.candidates[0]
            roots[name] = name
        elif isinstance(node, Pll):
            reference_key, multiplier_key, fraction_key = pll_keys(name)
            reference = _setting(plan, reference_key, node.reference_divider, violations)
            whole = _setting(plan, multiplier_key, node.multiplier, violations)
            fraction = _setting(plan, fraction_key, range(2**node.fraction_bits), violations, 0)
            detector = detectors[name] = clocks[node.input] / reference
            _within(f"{name} PFD", detector, node.pfd, violations)
            clocks[name] = detector * (whole + Fraction(fraction, 2**node.fraction_bits))
            roots[name] = roots[node.input]
            _within(f"{name} VCO", clocks[name], node.vco, violations)
        elif isinstance(node, Divider):
            value = _setting(plan, divider_key(name), node.divide, violations)
            clocks[name] = clocks[node.input] / value
            roots[name] = roots[node.input]
            _within(name, clocks[name], (node.minimum, node.maximum), violations)
        elif isinstance(node, Mux):
            chosen = plan.mux_input(name)
            if chosen not in node.inputs:
                violations.append(
                    f"{mux_key(name)}: {chosen!r} is not one of {', '.join(node.inputs)}"
                )
                chosen = node.inputs[0]
            clocks[name], roots[name] = clocks[str(chosen)], roots[str(chosen)]
            _within(name, clocks[name], (None, node.maximum), violations)
    checks = []
    for peripheral in scenario.peripherals:
        input_clock = clocks[peripheral.clock]
        source = scenario.source(roots[peripheral.clock])
        for requirement in peripheral.requirements:
            option = _option(plan, requirement, violations)
            divisor = _divisor(plan, requirement, option, violations)
            achieved = requirement.achieved(input_clock, divisor)
            checks.append(
                RateCheck(
                    requirement,
                    input_clock,
                    divisor,
                    achieved,
                    source.name,
                    source.budget,
                    source.budget_rss,
                    option,
                )
            )
    return Evaluation(clocks, roots, tuple(checks), tuple(violations), detectors)


def _divisor(plan: Plan, requirement: Requirement, option: Option, violations: list[str]) -> int:
    """The rate's divisor as the plan sets it: the chosen option's value, or the product of
    the stages."""
    match requirement.divisor:
        case Stages(stages):
            return math.prod(
                _setting(plan, requirement.stage_setting(name), values, violations)
                for name, values in stages
            )
        case Options():
            return _setting(plan, requirement.setting, option.divisors, violations)


def _option(plan: Plan, requirement: Requirement, violations: list[str]) -> Option:
    choices = requirement.options
    if len(choices) == 1:
        return choices[0]
    index = _setting(plan, requirement.option_setting, range(len(choices)), violations)
    return choices[index] if index < len(choices) else choices[0]


def _setting(
    plan: Plan,
    key: str,
    allowed: range | tuple[int, ...],
    violations: list[str],
    default: int | None = None,
) -> int:
    value = plan.settings.get(key, default)
    if value is None and len(allowed) == 1:
        return allowed[0]
    count = value if isinstance(value, int) and not isinstance(value, bool) else None
    if count is not None and count in allowed:
        return count
    # Recorded, then carried on: a positive whole value is kept (a what-if plan shows its
    # rates), anything else becomes the smallest allowed, never a division by zero.
    violations.append(f"{key}: {value!r} is not an allowed value")
    return count if count is not None and count > 0 else smallest(allowed)


def _within(
    label: str,
    value: Fraction,
    limits: tuple[Fraction | None, Fraction | None],
    violations: list[str],
) -> None:
    low, high = limits
    if low is not None and value < low:
        violations.append(f"{label} at {format_hz(value)} is below {format_hz(low)}")
    if high is not None and value > high:
        violations.append(f"{label} at {format_hz(value)} is above {format_hz(high)}")
