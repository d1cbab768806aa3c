"""What every peripheral kind hands to the search: rates required of its input clock.

A rate comes in one of two shapes: a :class:`ToleranceRate` (a target within an
allowance: a baud rate, a USB clock) or a :class:`CeilingRate` (a maximum the rate must
stay under, made as fast as allowed: an SPI, SD or I2C clock). Each shape knows its own
arithmetic (worst case, share, pass) and its own words, so callers never ask which
shape they hold. Either way the rate is ``input clock × numerator / divisor``, and the
divisor is described once (:data:`Divisor`): one value of one of its options, or a
product of named stages.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass, field
from fractions import Fraction
from typing import ClassVar

from clockplan.errors import InternalError
from clockplan.plan import option_key, stage_key
from clockplan.quantities import format_hz, format_relative

__all__ = [
    "Rate",
    "ToleranceRate",
    "CeilingRate",
    "Requirement",
    "Peripheral",
    "Divisors",
    "Divisor",
    "Option",
    "Options",
    "Stages",
    "AT_RISK_SHARE",
    "plain",
    "times",
    "smallest",
    "largest",
    "format_rate",
    "format_share",
]

Divisors = range | tuple[int, ...]
"""Allowed values of an internal divisor: a ``range`` (maybe stepped) or a sorted tuple."""


def smallest(values: Divisors) -> int:
    """The least allowed value, without walking a range (a range may hold 2**40 values)."""
    return values[0] if isinstance(values, range) and values.step > 0 else min(values)


def largest(values: Divisors) -> int:
    """The greatest allowed value, without walking a range."""
    return values[-1] if isinstance(values, range) and values.step > 0 else max(values)


def times(values: Divisors, factor: int) -> Divisors:
    """Every allowed value multiplied by ``factor``, keeping a range a range."""
    if isinstance(values, range):
        return range(values.start * factor, (values.stop - 1) * factor + 1, values.step * factor)
    return tuple(value * factor for value in values)


@dataclass(frozen=True)
class Option:
    """One way to make a rate: the divisors it allows and what comes with them.

    A CAN controller has one option per bit timing (quanta per bit, segments, SJW): the
    divisor is prescaler × quanta, and the tolerance the bus allows depends on the timing.
    """

    divisors: Divisors
    allowance: Fraction | None = None
    """This option's own allowance (a CAN timing's); None: the rate's (always, for a ceiling)."""
    label: str = ""
    """What the option is, for people ("16 tq, sample point 87.5 %, SJW 1")."""
    factor: int = 1
    """The peripheral's register holds divisor / ``factor``: a CAN prescaler (divisor ÷
    quanta), a UART's fractional divisor (count ÷ oversampling·2^fraction_bits)."""
    settings: tuple[tuple[str, int], ...] = ()
    """Fixed register-level settings this option implies (quanta, phase segments …)."""


@dataclass(frozen=True)
class Options:
    """A divisor that is one allowed value of one of its options (a plain divisor: one option).

    With several options the chosen one's index is a setting of its own (``option_key``).
    """

    options: tuple[Option, ...]

    def __post_init__(self) -> None:
        if not self.options:
            raise InternalError("a divisor needs at least one option")

    def keys(self, setting: str) -> tuple[str, ...]:
        """The plan's settings this divisor takes: the divisor, and the option when there are
        several."""
        return (setting, option_key(setting)) if len(self.options) > 1 else (setting,)

    @property
    def value_sets(self) -> tuple[Divisors, ...]:
        """Every set of values the divisor draws from."""
        return tuple(option.divisors for option in self.options)


PRODUCT_OPTION = Option(divisors=())
"""The one option of a product of stages: its values are the stages', its allowance the rate's."""


@dataclass(frozen=True)
class Stages:
    """A divisor that is the product of named stages (a timer's prescaler × reload), each
    a setting of its own (``stage_key``)."""

    stages: tuple[tuple[str, Divisors], ...]
    options: tuple[Option, ...] = field(default=(PRODUCT_OPTION,), init=False)
    """The product is the only way to make the rate."""

    def keys(self, setting: str) -> tuple[str, ...]:
        """The plan's settings this divisor takes: one per stage, in order."""
        return tuple(stage_key(setting, name) for name, _ in self.stages)

    @property
    def value_sets(self) -> tuple[Divisors, ...]:
        """Every set of values the divisor draws from: one per stage."""
        return tuple(values for _, values in self.stages)


Divisor = Options | Stages
"""How a rate's divisor is made: one value of one option, or a product of stages."""


def plain(divisors: Divisors = (1,), factor: int = 1) -> Options:
    """A divisor with one option: any of ``divisors`` (the register holds divisor / factor)."""
    return Options((Option(divisors, factor=factor),))


AT_RISK_SHARE = Fraction(4, 5)
"""A rate whose worst case uses more than this share of its allowance is marked "at risk".

Our own convention (no source): it passes, but with less than a fifth of the
allowance left it deserves a second look before the board is built.
"""


def format_share(share: Fraction) -> str:
    """A share of an allowance as a percentage, as every output prints it."""
    return f"{float(share) * 100:.2f} %"


def format_rate(value: Fraction, unit: str) -> str:
    """A rate in hertz with a readable prefix, a bit rate likewise in bit/s (500 kbit/s), or
    a baud rate as a plain number."""
    if unit == "baud":
        return f"{float(value):.7g} Bd"
    if unit == "bit/s":
        return format_hz(value).removesuffix("Hz") + "bit/s"
    return format_hz(value)


@dataclass(frozen=True, kw_only=True)
class Rate(ABC):
    """What every required rate has: the peripheral's own divisor on its input clock.

    The achieved rate is ``input_clock × numerator / divisor``; for a UART with four
    fraction bits and 16× oversampling the numerator is 16 and the divisor counts
    sixteenths of the baud divisor, times 16.
    """

    peripheral: str
    label: str
    """What this rate is, for people: "115200 baud", "48 MHz clock"."""
    setting: str
    """Key of this rate's divisor in a plan's settings (stages and option keys derive from it)."""
    allowance_basis: str
    """Where the allowance (or the maximum) comes from: a standard, a derivation, the scenario."""
    numerator: int = 1
    divisor: Divisor = field(default_factory=plain)
    unit: str = "Hz"
    """Unit to show the rate in: "Hz", "baud" (UARTs) or "bit/s" (CAN)."""

    ranked_by_share: ClassVar[bool]
    """Whether the rate's share enters the plan's worst share (the figure of merit)."""

    @property
    @abstractmethod
    def nominal(self) -> Fraction:
        """The rate the error is measured from, in hertz (or baud): target or maximum."""

    @property
    def options(self) -> tuple[Option, ...]:
        """The ways to make the rate (one, for a plain divisor or a product of stages)."""
        return self.divisor.options

    @property
    def option_setting(self) -> str:
        """Key of the chosen option's index in a plan's settings (when there are several)."""
        return option_key(self.setting)

    def stage_setting(self, name: str) -> str:
        """Key of one stage's value in a plan's settings."""
        return stage_key(self.setting, name)

    @property
    def setting_keys(self) -> tuple[str, ...]:
        """Every setting of the plan this rate's divisor takes."""
        return self.divisor.keys(self.setting)

    def achieved(self, input_clock: Fraction, divisor: int) -> Fraction:
        """The rate produced from ``input_clock`` hertz with ``divisor``."""
        return input_clock * self.numerator / divisor

    def error(self, achieved: Fraction) -> Fraction:
        """Synthesis error: achieved / nominal − 1, exact."""
        return achieved / self.nominal - 1

    @abstractmethod
    def allowance_of(self, option: Option) -> Fraction | None:
        """The largest worst-case relative error allowed with ``option`` (None: a maximum)."""

    @abstractmethod
    def worst_case(self, achieved: Fraction, budget: Fraction) -> Fraction:
        """The worst relative deviation a source off by up to ``budget`` can push it to."""

    @abstractmethod
    def share(self, achieved: Fraction, budget: Fraction, option: Option) -> Fraction:
        """How much of its limit the worst case uses; above 1 fails."""

    @abstractmethod
    def margin(self, achieved: Fraction, budget: Fraction, option: Option) -> Fraction:
        """Room left before the limit, as a relative deviation (negative: over it)."""

    @abstractmethod
    def passes(self, achieved: Fraction, budget: Fraction, option: Option) -> bool:
        """Whether the worst case stays within the limit."""

    @abstractmethod
    def at_risk(self, share: Fraction) -> bool:
        """Whether a passing rate with this share deserves a second look."""

    @abstractmethod
    def limit_text(self, option: Option) -> str:
        """What the rate must meet, in words: its allowance, or ``"≤ 25 MHz"``."""

    @abstractmethod
    def worst_case_text(self, worst_case: Fraction) -> str:
        """The worst case as the tables print it."""

    @abstractmethod
    def worst_case_rss_text(self, worst_case_rss: float) -> str:
        """The statistical (RSS) worst case as the report prints it."""

    @abstractmethod
    def standing_phrases(
        self, achieved: Fraction, budget: Fraction, option: Option, *, brief: bool
    ) -> tuple[str, ...]:
        """Where the rate stands against its limit, in one clause cut into phrases that a
        narrow view may put on separate lines (``brief``: fewer figures)."""

    def standing_text(
        self, achieved: Fraction, budget: Fraction, option: Option, *, brief: bool
    ) -> str:
        """Where the rate stands against its limit, in one clause."""
        return "".join(self.standing_phrases(achieved, budget, option, brief=brief))


@dataclass(frozen=True, kw_only=True)
class ToleranceRate(Rate):
    """A rate wanted at ``target`` within ``allowance`` (worst case, source budget included)."""

    target: Fraction
    """Rate wanted, in hertz (or baud)."""
    allowance: Fraction
    """Largest worst-case relative error allowed (the loosest, when options bring their own)."""

    ranked_by_share: ClassVar[bool] = True

    @property
    def nominal(self) -> Fraction:
        """The target."""
        return self.target

    def allowance_of(self, option: Option) -> Fraction:
        """The option's own allowance, else the rate's."""
        return self.allowance if option.allowance is None else option.allowance

    def worst_case(self, achieved: Fraction, budget: Fraction) -> Fraction:
        """(1 + e)(1 ± b) − 1 at its largest: |e| + b·(1 + e)."""
        error = self.error(achieved)
        return abs(error) + budget * (1 + error)

    def share(self, achieved: Fraction, budget: Fraction, option: Option) -> Fraction:
        """Worst case as a share of the allowance."""
        return self.worst_case(achieved, budget) / self.allowance_of(option)

    def margin(self, achieved: Fraction, budget: Fraction, option: Option) -> Fraction:
        """Allowance − worst case."""
        return self.allowance_of(option) - self.worst_case(achieved, budget)

    def passes(self, achieved: Fraction, budget: Fraction, option: Option) -> bool:
        """Whether the worst case fits inside the allowance."""
        return self.worst_case(achieved, budget) <= self.allowance_of(option)

    def at_risk(self, share: Fraction) -> bool:
        """More than :data:`AT_RISK_SHARE` of the allowance used."""
        return share > AT_RISK_SHARE

    def limit_text(self, option: Option) -> str:
        """The allowance, ``"±0.5 %"``."""
        return format_relative(self.allowance_of(option))

    def worst_case_text(self, worst_case: Fraction) -> str:
        """A size, unsigned."""
        return format_relative(worst_case)

    def worst_case_rss_text(self, worst_case_rss: float) -> str:
        """A size, unsigned."""
        return format_relative(worst_case_rss)

    def standing_phrases(
        self, achieved: Fraction, budget: Fraction, option: Option, *, brief: bool
    ) -> tuple[str, ...]:
        """Error, worst case and allowance; unless ``brief``, the share used and the margin."""
        error = format_relative(self.error(achieved), signed=True)
        worst = format_relative(self.worst_case(achieved, budget))
        if brief:
            return f"error {error},", f" worst case {worst} of {self.limit_text(option)} allowed"
        share = format_share(self.share(achieved, budget, option))
        margin = format_relative(self.margin(achieved, budget, option), signed=True)
        return (
            f"error {error},",
            f" worst {worst} of {self.limit_text(option)}",
            f" ({share} used),",
            f" margin {margin}",
        )


@dataclass(frozen=True, kw_only=True)
class CeilingRate(Rate):
    """A rate that must stay at or under ``maximum`` (and at or over ``floor`` when given)
    with its source's budget, made as fast as that allows: an SPI, SD or I2C clock."""

    maximum: Fraction
    """The fastest the rate may be, budget included, in hertz."""
    floor: Fraction | None = None
    """The slowest it may be, budget included (a min..max window), in hertz."""

    ranked_by_share: ClassVar[bool] = False
    """Made as fast as allowed on purpose, a ceiling is ranked by speed, not by share."""

    @property
    def nominal(self) -> Fraction:
        """The maximum."""
        return self.maximum

    def allowance_of(self, option: Option) -> None:
        """None: a ceiling has a maximum, not an allowance."""
        return None

    def fastest(self, achieved: Fraction, budget: Fraction) -> Fraction:
        """The fastest the source's budget can push the rate, as a share of the maximum."""
        return achieved * (1 + budget) / self.maximum

    def worst_case(self, achieved: Fraction, budget: Fraction) -> Fraction:
        """The fastest rate it reaches, relative to the maximum (at most 0 to pass)."""
        return self.fastest(achieved, budget) - 1

    def share(self, achieved: Fraction, budget: Fraction, option: Option) -> Fraction:
        """The fastest rate it reaches as a share of the maximum."""
        return self.fastest(achieved, budget)

    def margin(self, achieved: Fraction, budget: Fraction, option: Option) -> Fraction:
        """How far below the maximum the fastest rate stays."""
        return -self.worst_case(achieved, budget)

    def passes(self, achieved: Fraction, budget: Fraction, option: Option) -> bool:
        """At or under the maximum, and at or over the floor, with the budget."""
        slowest = achieved * (1 - budget)
        above_floor = self.floor is None or slowest >= self.floor
        return self.fastest(achieved, budget) <= 1 and above_floor

    def at_risk(self, share: Fraction) -> bool:
        """Never: the search drives a ceiling close to its limit on purpose, budget included."""
        return False

    def limit_text(self, option: Option) -> str:
        """``"≤ 25 MHz"``, or ``"9 MHz .. 25 MHz"`` with a floor."""
        top = format_rate(self.maximum, self.unit)
        if self.floor is None:
            return f"≤ {top}"
        return f"{format_rate(self.floor, self.unit)} .. {top}"

    def worst_case_text(self, worst_case: Fraction) -> str:
        """Signed: below the maximum is negative."""
        return format_relative(worst_case, signed=True)

    def worst_case_rss_text(self, worst_case_rss: float) -> str:
        """None: a maximum is met or not, with the whole budget."""
        return "-"

    def standing_phrases(
        self, achieved: Fraction, budget: Fraction, option: Option, *, brief: bool
    ) -> tuple[str, ...]:
        """The limit and how much of it the fastest rate uses; unless ``brief``, how far below."""
        share = format_share(self.share(achieved, budget, option))
        phrases = (f"limit {self.limit_text(option)}:", f" with the budget at most {share} of it")
        if brief:
            return phrases
        worst = format_relative(self.worst_case(achieved, budget), signed=True)
        return (*phrases, f" ({worst})")


Requirement = ToleranceRate | CeilingRate
"""A rate some peripheral requires, in either shape."""


@dataclass(frozen=True)
class Peripheral:
    """A peripheral of the scenario: its kind, the clock it is fed by and its requirements."""

    name: str
    kind: str
    clock: str
    """Name of the clock-tree node feeding this peripheral."""
    requirements: tuple[Requirement, ...]
    details: tuple[tuple[str, str], ...] = field(default=())
    """Extra facts to show (frame format, oversampling …) as (label, text) pairs."""
