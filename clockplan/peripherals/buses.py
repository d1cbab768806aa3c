"""Buses clocked at or below a maximum: SPI, quad SPI, SD cards and I2C.

Each is a ceiling: the clock plus the source's budget must stay at or under the maximum
(and at or over ``min`` when given), and the search makes it as fast as it may be through
the peripheral's own prescaler ``divide`` (a set, a range or "pow2 a..b").

Sources:

* SPI and quad SPI have no standard clock: the maximum comes from the attached device's
  datasheet, so ``max`` is required (common practice).
* SD cards: default speed ≤ 25 MHz and high speed ≤ 50 MHz (SD Association bus-speed
  figures and the SD Physical Layer Simplified Specification's TRAN_SPEED values, seen);
  identification ≤ 400 kHz and SPI mode ≤ 25 MHz (from memory, and said so wherever they
  are shown). The SD bus modes also need the identification clock while the card starts
  (its command line is open-drain until the card has an address), so they add that rate
  too (``identification = false`` leaves it out). SPI mode does not add it: its lines are
  push-pull from the start and the card may be clocked at up to 25 MHz at once (Source: a
  published answer on a programming mailing list, 2016, pointing to the timing appendix of
  an SD card maker's product manual). Many published SPI-mode start-up guides still ask for
  100–400 kHz until the card is ready (common practice): ``identification = true`` adds the
  slow clock in SPI mode for firmware that starts that way.
* I2C: standard mode ≤ 100 kHz, fast mode ≤ 400 kHz, fast-mode plus ≤ 1 MHz, high-speed
  mode ≤ 3.4 MHz, ultra-fast mode ≤ 5 MHz (the I2C-bus specification and user manual,
  UM10204; seen restated in several sources). These are maxima: 97 kHz serves a
  standard-mode bus, 101 kHz does not.
* Default prescaler ranges (SPI "pow2 1..8", quad SPI "1..256", SD "1..1024", I2C
  "1..4096") are our own; set your controller's.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import CeilingRate, Divisors, Peripheral, plain
from clockplan.peripherals.common import parse_flag, read_clock
from clockplan.quantities import format_hz, parse_frequency, parse_integer_choices

__all__ = ["KINDS", "SD_MODES", "I2C_MODES", "SD_IDENTIFICATION", "read"]

KINDS = ("spi", "qspi", "sd", "i2c")

SD_IDENTIFICATION = Fraction(400_000)
"""Card identification clock maximum, hertz (from memory)."""
SD_MODES: dict[str, tuple[Fraction, str]] = {
    "identification": (
        SD_IDENTIFICATION,
        "SD Physical Layer spec: identification ≤ 400 kHz (from memory)",
    ),
    "default-speed": (Fraction(25_000_000), "SD Physical Layer spec: default speed ≤ 25 MHz"),
    "high-speed": (Fraction(50_000_000), "SD Physical Layer spec: high speed ≤ 50 MHz"),
    "spi": (Fraction(25_000_000), "SD Physical Layer spec: SPI mode ≤ 25 MHz (from memory)"),
}
"""SD bus modes: the clock maximum and its source."""
SD_SLOW_START = {"identification": False, "default-speed": True, "high-speed": True, "spi": False}
"""Whether a mode adds the identification clock unless told otherwise (see the docstring)."""
I2C_MODES: dict[str, tuple[Fraction, str]] = {
    "standard": (Fraction(100_000), "I2C-bus specification UM10204: standard mode ≤ 100 kHz"),
    "fast": (Fraction(400_000), "I2C-bus specification UM10204: fast mode ≤ 400 kHz"),
    "fast-plus": (Fraction(1_000_000), "I2C-bus specification UM10204: fast-mode plus ≤ 1 MHz"),
    "high-speed": (Fraction(3_400_000), "I2C-bus specification UM10204: high speed ≤ 3.4 MHz"),
    "ultra-fast": (Fraction(5_000_000), "I2C-bus specification UM10204: ultra fast ≤ 5 MHz"),
}
"""I2C bus modes: the SCL maximum and its source."""
DEFAULT_DIVIDE: dict[str, Divisors] = {
    "spi": (2, 4, 8, 16, 32, 64, 128, 256),
    "qspi": range(1, 257),
    "sd": range(1, 1025),
    "i2c": range(1, 4097),
}
"""Each kind's prescaler when the scenario gives none: our own defaults."""


def _ceiling(
    name: str,
    label: str,
    setting: str,
    maximum: Fraction,
    floor: Fraction | None,
    basis: str,
    divide: Divisors,
) -> CeilingRate:
    return CeilingRate(
        peripheral=name,
        label=label,
        setting=setting,
        maximum=maximum,
        floor=floor,
        allowance_basis=basis,
        divisor=plain(divide),
    )


def _limit(fields: Fields, limit: Fraction | None, basis: str) -> tuple[Fraction, str]:
    """The ``max`` key: required without a mode's limit, else at most that limit."""
    if limit is None:
        return fields.take("max", parse_frequency), "set in the scenario (no standard clock)"
    maximum = fields.take("max", parse_frequency, limit)
    if maximum > limit:
        raise fields.error("max", f"{format_hz(maximum)} is above the mode's {format_hz(limit)}")
    return (
        maximum,
        basis if maximum == limit else f"set in the scenario (mode allows {format_hz(limit)})",
    )


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "spi" | "qspi" | "sd" | "i2c"``: ``mode``, ``max``, ``min``, ``divide``."""
    kind = fields.take_str("kind", choices=KINDS)
    clock = read_clock(fields)
    modes = {"sd": SD_MODES, "i2c": I2C_MODES}.get(kind)
    mode = ""
    limit: Fraction | None = None
    basis = ""
    if modes is not None:
        mode = fields.take_str(
            "mode", "default-speed" if kind == "sd" else "standard", choices=tuple(modes)
        )
        limit, basis = modes[mode]
    maximum, basis = _limit(fields, limit, basis)
    floor = fields.take("min", parse_frequency, None)
    if floor is not None and floor > maximum:
        raise fields.error("min", f"{format_hz(floor)} is above the maximum {format_hz(maximum)}")
    divide = fields.take("divide", parse_integer_choices, DEFAULT_DIVIDE[kind])
    words = {"spi": "SPI clock", "qspi": "quad SPI clock", "sd": "SD clock", "i2c": "I2C clock"}
    label = words[kind] + (f" ({mode})" if mode else "")
    requirements = [_ceiling(name, label, f"{name}.divide", maximum, floor, basis, divide)]
    slow_start = kind == "sd" and fields.take("identification", parse_flag, SD_SLOW_START[mode])
    if slow_start and mode != "identification":
        identification, identification_basis = SD_MODES["identification"]
        first = _ceiling(
            name,
            "SD clock (identification)",
            f"{name}.identification_divide",
            identification,
            None,
            identification_basis,
            divide,
        )
        requirements.insert(0, first)
    return Peripheral(name, kind, clock, tuple(requirements))
