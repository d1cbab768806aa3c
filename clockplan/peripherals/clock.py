"""A plain clock at a fixed rate with a tolerance the scenario states.

For anything without a rule of its own: a display pixel clock, an ADC clock, a
radio reference. Optional internal divider set ``divide``.
"""

from __future__ import annotations

from clockplan._fields import Fields
from clockplan.peripherals.base import Peripheral, ToleranceRate, plain
from clockplan.peripherals.common import read_allowance, read_clock
from clockplan.quantities import format_hz, parse_frequency, parse_integer_choices

KINDS = ("clock",)


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "clock"``: ``rate``, ``allowance`` and optional ``divide``."""
    clock = read_clock(fields)
    rate = fields.take("rate", parse_frequency)
    divide = fields.take("divide", parse_integer_choices, (1,))
    allowance, basis = read_allowance(fields, None, "")
    requirement = ToleranceRate(
        peripheral=name,
        label=format_hz(rate),
        setting=f"{name}.divide",
        target=rate,
        allowance=allowance,
        allowance_basis=basis,
        divisor=plain(divide),
    )
    return Peripheral(name, "clock", clock, (requirement,))
