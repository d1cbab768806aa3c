"""What every peripheral kind hands to the search: rate requirements on its kernel clock."""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

__all__ = ["Requirement", "Peripheral", "Divisors"]

Divisors = range | tuple[int, ...]
"""Allowed values of an internal divisor: a ``range`` (maybe stepped) or a sorted tuple."""


@dataclass(frozen=True)
class Requirement:
    """One rate a peripheral must produce from its kernel clock through its own divisor.

    The achieved rate is ``kernel × numerator / divisor``; for a UART with four
    fraction bits and 16× oversampling the numerator is 16 and the divisor counts
    sixteenths of the baud divisor, times 16.
    """

    peripheral: str
    label: str
    """What this rate is, for people: "115200 baud", "48 MHz kernel"."""
    setting: str
    """Key of this requirement's divisor in a plan's settings."""
    target: Fraction
    """Rate wanted, in hertz (or baud)."""
    allowance: Fraction
    """Largest worst-case relative error allowed."""
    allowance_basis: str
    """Where the allowance comes from: a standard, a derivation, or the scenario."""
    numerator: int = 1
    divisors: Divisors = (1,)
    divisor_scale: int = 1
    """Divisor as the peripheral's register holds it = divisor / divisor_scale."""

    def achieved(self, kernel: Fraction, divisor: int) -> Fraction:
        """The rate produced from ``kernel`` hertz with ``divisor``."""
        return kernel * self.numerator / divisor


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
