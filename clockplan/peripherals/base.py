"""What every peripheral kind hands to the search: rate requirements on its input clock."""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

from clockplan.plan import option_key, stage_key

__all__ = ["Requirement", "Peripheral", "Divisors", "Option", "times", "smallest", "largest"]

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
    """One way to make a rate: the divisors it allows and the allowance that comes with them.

    A CAN controller has one option per bit timing (quanta per bit, segments, SJW): the
    divisor is prescaler × quanta, and the tolerance the bus allows depends on the timing.
    """

    divisors: Divisors
    allowance: Fraction
    """Largest worst-case relative error allowed with this option."""
    label: str = ""
    """What the option is, for people ("16 tq, sample point 87.5 %, SJW 1")."""
    factor: int = 1
    """The divisor is ``factor`` × the value the peripheral's prescaler holds."""
    settings: tuple[tuple[str, int], ...] = ()
    """Fixed register-level settings this option implies (quanta, phase segments …)."""


@dataclass(frozen=True)
class Requirement:
    """One rate a peripheral must produce from its input clock through its own divisor.

    The achieved rate is ``input_clock × numerator / divisor``; for a UART with four
    fraction bits and 16× oversampling the numerator is 16 and the divisor counts
    sixteenths of the baud divisor, times 16.

    With ``ceiling`` the target is a maximum (an SPI, SD or I2C clock): the rate plus the
    source's budget must stay at or below it (and at or above ``floor`` when given), and
    the search makes it as fast as it may be. Ceilings do not enter the worst share.
    """

    peripheral: str
    label: str
    """What this rate is, for people: "115200 baud", "48 MHz clock"."""
    setting: str
    """Key of this requirement's divisor in a plan's settings."""
    target: Fraction
    """Rate wanted (or the maximum, for a ceiling), in hertz (or baud)."""
    allowance: Fraction
    """Largest worst-case relative error allowed (unused for a ceiling)."""
    allowance_basis: str
    """Where the allowance (or the ceiling) comes from: a standard, a derivation, the scenario."""
    numerator: int = 1
    divisors: Divisors = (1,)
    divisor_scale: int = 1
    """Divisor as the peripheral's register holds it = divisor / divisor_scale."""
    options: tuple[Option, ...] = ()
    """Ways to make the rate; empty means one option: ``divisors`` with ``allowance``."""
    ceiling: bool = False
    floor: Fraction | None = None
    """Lowest acceptable rate for a ceiling (a min..max window), hertz."""
    unit: str = "Hz"
    """Unit to show the rate in: "Hz", "baud" (UARTs) or "bit/s" (CAN)."""
    stages: tuple[tuple[str, Divisors], ...] = ()
    """Named prescaler stages whose product is the divisor (a timer's prescaler × reload).

    When given, each stage is a setting of its own (``stage_setting(name)``) and
    ``divisors``/``options`` are not used: the divisor is the product of the stages.
    """

    def __post_init__(self) -> None:
        if self.stages and self.options:
            raise ValueError(f"{self.setting}: a requirement has stages or options, not both")

    def stage_setting(self, name: str) -> str:
        """Key of one stage's value in a plan's settings."""
        return stage_key(self.setting, name)

    @property
    def choices(self) -> tuple[Option, ...]:
        """The options, with the plain case as one option."""
        return self.options or (Option(self.divisors, self.allowance),)

    @property
    def option_setting(self) -> str:
        """Key of the chosen option's index in a plan's settings (when there are several)."""
        return option_key(self.setting)

    def achieved(self, input_clock: Fraction, divisor: int) -> Fraction:
        """The rate produced from ``input_clock`` hertz with ``divisor``."""
        return input_clock * self.numerator / divisor


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
