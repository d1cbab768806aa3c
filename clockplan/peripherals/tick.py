"""A periodic tick (1 Hz real-time clock, 1 kHz scheduler tick) through a divider chain.

``chain`` is the product of the chain's stages: ``"pow2 15"`` is a 15-stage binary
ripple counter (÷32768), a range or list gives a programmable prescaler.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import Peripheral, ToleranceRate, plain
from clockplan.peripherals.common import read_allowance, read_clock
from clockplan.quantities import format_hz, parse_frequency, parse_integer_choices

KINDS = ("tick",)

DEFAULT_ALLOWANCE = Fraction(200, 10**6)
"""200 ppm (about 17 s a day) for a time-of-day tick; common practice, no source."""


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "tick"``: ``rate`` (default 1 Hz) and ``chain``."""
    clock = read_clock(fields)
    rate = fields.take("rate", parse_frequency, Fraction(1))
    chain = fields.take("chain", parse_integer_choices)
    allowance, basis = read_allowance(fields, DEFAULT_ALLOWANCE, "200 ppm; common practice")
    requirement = ToleranceRate(
        peripheral=name,
        label=f"{format_hz(rate)} tick",
        setting=f"{name}.chain",
        target=rate,
        allowance=allowance,
        allowance_basis=basis,
        divisor=plain(chain),
    )
    return Peripheral(name, "tick", clock, (requirement,))
