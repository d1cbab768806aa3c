"""USB: an input clock within the data-rate tolerance of the speed and of the device's role.

Source: USB 2.0 Specification, §7.1.11 "Data Signaling Rate" (the section number and its
wording are confirmed by published quotations):

* high speed: 480.00 Mb/s ±500 ppm;
* full speed: 12.000 Mb/s. Hosts, hubs and high-speed-capable devices must transmit full
  speed (and low speed) within ±0.05 % (500 ppm); only a full-speed-only device may use
  ±0.25 %;
* low speed: 1.50 Mb/s ±1.5 % for a low-speed device ("allows the use of resonators in
  low-cost low-speed devices"); a host or hub sending low speed holds ±0.05 %.

So each kind defaults to the strict figure, and a scenario says when its device earns the
looser one (``full_speed_only_device = true``, ``low_speed_device = true``); the allowance
basis says which rule applied. A full-speed transceiver samples at 4× the bit rate, so its
clock is 48 MHz and inherits the tolerance (common practice, no source); a low-speed
device's input clock is its oversampling (4×, as at full speed: common practice) ×
1.5 Mb/s; a high-speed PHY multiplies one reference frequency (named in the scenario: the
board straps one) up to 480 Mb/s, and its PLL passes the reference's relative error
through unchanged.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import Peripheral, ToleranceRate, plain
from clockplan.peripherals.common import parse_flag, read_allowance, read_clock
from clockplan.quantities import format_hz, parse_frequency, parse_integer_choices

KINDS = ("usb-full-speed", "usb-low-speed", "usb-high-speed")

FULL_SPEED_CLOCK = Fraction(48_000_000)
"""Input clock of a full-speed USB device: 4 × 12 Mb/s, in hertz."""
HOST_TOLERANCE = Fraction(5, 10_000)
"""±0.05 %: USB 2.0 §7.1.11, full and low speed sent by hosts, hubs, high-speed-capable devices."""
FULL_SPEED_ONLY_TOLERANCE = Fraction(25, 10_000)
"""±0.25 %: USB 2.0 §7.1.11, full speed sent by a full-speed-only device."""
LOW_SPEED_RATE = Fraction(1_500_000)
"""Low-speed data rate, bits per second."""
LOW_SPEED_DEVICE_TOLERANCE = Fraction(15, 1000)
"""±1.5 %: USB 2.0 §7.1.11, low speed sent by a low-speed device."""
HIGH_SPEED_TOLERANCE = Fraction(500, 10**6)
"""±500 ppm: USB 2.0 §7.1.11, high-speed data signalling rate (480 Mb/s)."""

FULL_SPEED_STRICT_BASIS = "USB 2.0 §7.1.11: sent by a host, hub or high-speed-capable device"
FULL_SPEED_ONLY_BASIS = "USB 2.0 §7.1.11: sent by a full-speed-only device"
LOW_SPEED_STRICT_BASIS = "USB 2.0 §7.1.11: low speed sent by a host or hub"
LOW_SPEED_DEVICE_BASIS = "USB 2.0 §7.1.11: sent by a low-speed device"


def full_speed_rule(full_speed_only_device: bool) -> tuple[Fraction, str]:
    """The full-speed tolerance and its basis: ±0.25 % only for a full-speed-only device."""
    if full_speed_only_device:
        return FULL_SPEED_ONLY_TOLERANCE, FULL_SPEED_ONLY_BASIS
    return HOST_TOLERANCE, FULL_SPEED_STRICT_BASIS


def low_speed_rule(low_speed_device: bool) -> tuple[Fraction, str]:
    """The low-speed tolerance and its basis: ±1.5 % only for a low-speed device."""
    if low_speed_device:
        return LOW_SPEED_DEVICE_TOLERANCE, LOW_SPEED_DEVICE_BASIS
    return HOST_TOLERANCE, LOW_SPEED_STRICT_BASIS


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
    """Read ``kind = "usb-full-speed"``: ``from``, ``full_speed_only_device``, ``allowance``."""
    clock = read_clock(fields)
    tolerance, rule = full_speed_rule(fields.take("full_speed_only_device", parse_flag, False))
    allowance, basis = read_allowance(fields, tolerance, rule)
    requirement = ToleranceRate(
        peripheral=name,
        label="48 MHz clock",
        setting=f"{name}.divide",
        target=FULL_SPEED_CLOCK,
        allowance=allowance,
        allowance_basis=basis,
    )
    return Peripheral(name, "usb-full-speed", clock, (requirement,))


def read_low_speed(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "usb-low-speed"``: ``oversampling`` (4), ``divide``, ``low_speed_device``."""
    clock = read_clock(fields)
    oversampling = fields.take_int("oversampling", 4, minimum=1, maximum=64)
    divide = fields.take("divide", parse_integer_choices, (1,))
    tolerance, rule = low_speed_rule(fields.take("low_speed_device", parse_flag, False))
    allowance, basis = read_allowance(fields, tolerance, rule)
    input_clock = LOW_SPEED_RATE * oversampling
    requirement = ToleranceRate(
        peripheral=name,
        label=f"{format_hz(input_clock)} clock",
        setting=f"{name}.divide",
        target=input_clock,
        allowance=allowance,
        allowance_basis=basis,
        divisor=plain(divide),
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
    requirement = ToleranceRate(
        peripheral=name,
        label=f"{format_hz(reference)} PHY reference",
        setting=f"{name}.divide",
        target=reference,
        allowance=allowance,
        allowance_basis=basis,
        divisor=plain(divide),
    )
    details = (("PHY", "multiplies the reference to 480 Mb/s; its ppm pass through"),)
    return Peripheral(name, "usb-high-speed", clock, (requirement,), details)
