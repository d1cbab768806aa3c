"""A hardware timer: an exact periodic rate (scheduler tick, PWM frequency) from its input clock.

The timer counts its input clock through a prescaler and then a reload (period) counter,
so rate = input_clock / (prescaler × reload); the search picks both (two stages of the divisor).
A PWM needs duty-cycle resolution: the reload is its step count, so give ``reload`` a
lower end (``"1000..65536"`` for at least 1000 steps).

Default allowance ±0.1 % (1000 ppm) on the rate: common practice, no source. A tick that
keeps time of day should use the ``tick`` kind's 200 ppm or its own ``allowance``. The
default 16-bit ranges (1..65536) are typical, not a standard: set your timer's.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import Peripheral, Stages, ToleranceRate
from clockplan.peripherals.common import read_allowance, read_clock
from clockplan.quantities import format_hz, parse_frequency, parse_integer_choices

__all__ = ["KINDS", "DEFAULT_ALLOWANCE", "read"]

KINDS = ("timer",)

DEFAULT_ALLOWANCE = Fraction(1, 1000)
"""±0.1 % on a timer's rate: common practice, no source."""
SIXTEEN_BITS = range(1, 65537)
"""A 16-bit prescaler or reload counter: divides by 1 … 65536."""


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "timer"``: ``rate``, ``prescaler`` and ``reload`` (their product divides)."""
    clock = read_clock(fields)
    rate = fields.take("rate", parse_frequency)
    prescaler = fields.take("prescaler", parse_integer_choices, SIXTEEN_BITS)
    reload = fields.take("reload", parse_integer_choices, SIXTEEN_BITS)
    allowance, basis = read_allowance(fields, DEFAULT_ALLOWANCE, "0.1 %; common practice")
    requirement = ToleranceRate(
        peripheral=name,
        label=f"{format_hz(rate)} period",
        setting=f"{name}.period",
        target=rate,
        allowance=allowance,
        allowance_basis=basis,
        divisor=Stages((("prescaler", prescaler), ("reload", reload))),
    )
    details = (("counts", f"prescaler {_span(prescaler)} × reload {_span(reload)}"),)
    return Peripheral(name, "timer", clock, (requirement,), details)


def _span(values: range | tuple[int, ...]) -> str:
    if isinstance(values, range) and values.step == 1 and len(values) > 2:
        return f"{values.start}..{values.stop - 1}"
    return ", ".join(map(str, values))
