"""USB full speed: a 48 MHz kernel clock within the full-speed data-rate tolerance.

Source: USB 2.0 Specification, §7.1.11 "Data Signaling Rate": full-speed data rate
12.000 Mb/s ±0.25 % (section number from memory; the figure is quoted verbatim in
public material). A full-speed transceiver samples at 4× the bit rate, so its clock
is 48 MHz and inherits the ±0.25 % (common practice, no source).
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.interfaces.base import Peripheral, Requirement
from clockplan.interfaces.common import read_allowance, read_clock

KINDS = ("usb-full-speed",)

FULL_SPEED_CLOCK = Fraction(48_000_000)
"""Kernel clock of a full-speed USB device: 4 × 12 Mb/s, in hertz."""
FULL_SPEED_TOLERANCE = Fraction(25, 10_000)
"""±0.25 %: USB 2.0 §7.1.11, full-speed data signalling rate."""


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "usb-full-speed"``: only ``from`` (and an ``allowance`` override)."""
    clock = read_clock(fields)
    allowance, basis = read_allowance(
        fields, FULL_SPEED_TOLERANCE, "USB 2.0 §7.1.11: full speed 12 Mb/s ±0.25 %"
    )
    requirement = Requirement(
        peripheral=name,
        label="48 MHz kernel",
        setting=f"{name}.divide",
        target=FULL_SPEED_CLOCK,
        allowance=allowance,
        allowance_basis=basis,
    )
    return Peripheral(name, "usb-full-speed", clock, (requirement,))
