"""USB full speed: a 48 MHz kernel clock within the full-speed data-rate tolerance.

Source: USB 2.0 Specification, §7.1.11 "Data Signaling Rate": full-speed data rate
12.000 Mb/s ±0.25 % (section number from memory; the figure is quoted verbatim in
public material). A full-speed transceiver samples at 4× the bit rate, so its clock
is 48 MHz and inherits the ±0.25 % (common practice, no source).

The same section gives low speed 1.50 Mb/s ±1.5 % ("allows the use of resonators in
low-cost low-speed devices") and high speed 480.00 Mb/s ±500 ppm. A low-speed device's
kernel clock is its oversampling (4×, as at full speed: common practice) × 1.5 Mb/s; a
high-speed PHY multiplies one reference frequency (named in the scenario: the board straps
one) up to 480 Mb/s, and its PLL passes the reference's relative error through unchanged.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.interfaces.base import Peripheral, Requirement
from clockplan.interfaces.common import read_allowance, read_clock
from clockplan.quantities import format_hz, parse_frequency, parse_integer_choices

KINDS = ("usb-full-speed", "usb-low-speed", "usb-high-speed")

FULL_SPEED_CLOCK = Fraction(48_000_000)
"""Kernel clock of a full-speed USB device: 4 × 12 Mb/s, in hertz."""
FULL_SPEED_TOLERANCE = Fraction(25, 10_000)
"""±0.25 %: USB 2.0 §7.1.11, full-speed data signalling rate."""


def read(fields: Fields, name: str) -> Peripheral:
    """Read any USB kind, by its speed."""
    kind = fields.take_str("kind", choices=KINDS)
    readers = {
        "usb-full-speed": read_full_speed,
        "usb-low-speed": read_low_speed,
        "usb-high-speed": read_high_speed,
    }
    return readers[kind](fields, name)


def read_full_speed(fields: Fields, name: str) -> Peripheral:
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


LOW_SPEED_RATE = Fraction(1_500_000)
"""Low-speed data rate, bits per second."""
LOW_SPEED_TOLERANCE = Fraction(15, 1000)
"""±1.5 %: USB 2.0 §7.1.11, low-speed data signalling rate."""
HIGH_SPEED_TOLERANCE = Fraction(500, 10**6)
"""±500 ppm: USB 2.0 §7.1.11, high-speed data signalling rate (480 Mb/s)."""


def read_low_speed(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "usb-low-speed"``: ``oversampling`` (4) and the peripheral's ``divide``."""
    clock = read_clock(fields)
    oversampling = fields.take_int("oversampling", 4, minimum=1, maximum=64)
    divide = fields.take("divide", parse_integer_choices, (1,))
    allowance, basis = read_allowance(
        fields, LOW_SPEED_TOLERANCE, "USB 2.0 §7.1.11: low speed 1.5 Mb/s ±1.5 %"
    )
    kernel = LOW_SPEED_RATE * oversampling
    requirement = Requirement(
        peripheral=name,
        label=f"{format_hz(kernel)} kernel",
        setting=f"{name}.divide",
        target=kernel,
        allowance=allowance,
        allowance_basis=basis,
        divisors=divide,
    )
    details = (("sampling", f"{oversampling}x the 1.5 Mb/s bit rate"),)
    return Peripheral(name, "usb-low-speed", clock, (requirement,), details)


def read_high_speed(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "usb-high-speed"``: the PHY's ``reference`` frequency and ``divide``."""
    clock = read_clock(fields)
    reference = fields.take("reference", parse_frequency)
    divide = fields.take("divide", parse_integer_choices, (1,))
    allowance, basis = read_allowance(
        fields, HIGH_SPEED_TOLERANCE, "USB 2.0 §7.1.11: high speed 480 Mb/s ±500 ppm"
    )
    requirement = Requirement(
        peripheral=name,
        label=f"{format_hz(reference)} PHY reference",
        setting=f"{name}.divide",
        target=reference,
        allowance=allowance,
        allowance_basis=basis,
        divisors=divide,
    )
    details = (("PHY", "multiplies the reference to 480 Mb/s; its ppm pass through"),)
    return Peripheral(name, "usb-high-speed", clock, (requirement,), details)
