"""Audio (I2S, TDM): sampling frequencies through a master clock and a bit clock.

The peripheral divides its input clock by a whole number to a master clock of
``master_clock`` × fs, and that again by a whole number to the bit clock, slots × slot bits
× fs; so fs = input_clock / (divide × master_clock). The error is counted in ppm of fs (the
master and bit clocks carry the same relative error).

Sources:

* Sampling frequencies: AES5 (preferred sampling frequencies) names 48 kHz for
  professional origination, 44.1 kHz for consumer-related work and 32 kHz for transmission,
  with their multiples (from memory: AES5's text was not read). Families: 32/48/96/192 kHz
  and 44.1/88.2/176.4 kHz.
* Master-clock ratios 128, 192, 256, 384, 512, 768 and 1024 × fs: codec master-clock tables
  (common practice).
* Allowance: ``quality = "studio"`` uses ITU-R BS.646 (formerly CCIR Rec. 646): a
  free-running sampling frequency within ±1×10⁻⁵ (±10 ppm). The default, ``"consumer"``,
  allows ±1000 ppm (0.1 %): common practice, no source. No standard bounds an I2S clock; the
  error shifts pitch and, against another clock domain, makes samples drift.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import Peripheral, ToleranceRate, plain, times
from clockplan.peripherals.common import read_allowance, read_clock
from clockplan.quantities import (
    QuantityError,
    format_hz,
    format_relative,
    parse_frequency,
    parse_integer_choices,
)

__all__ = ["KINDS", "FAMILIES", "MASTER_RATIOS", "QUALITIES", "family", "read"]

KINDS = ("audio",)

FAMILIES: dict[str, tuple[int, ...]] = {
    "48 kHz": (32_000, 48_000, 96_000, 192_000),
    "44.1 kHz": (44_100, 88_200, 176_400),
}
"""Sampling-frequency families (AES5, from memory), in hertz."""
MASTER_RATIOS = (128, 192, 256, 384, 512, 768, 1024)
"""Master clock as a multiple of fs (codec tables; common practice)."""
QUALITIES: dict[str, tuple[Fraction, str]] = {
    "consumer": (Fraction(1, 1000), "1000 ppm; common practice, no source"),
    "studio": (Fraction(1, 10**5), "ITU-R BS.646: free-running fs within ±10 ppm"),
}
"""Default allowance by the kind of equipment, with its basis."""


MAX_SAMPLE_RATES = 64
"""The most sampling rates one audio interface may list (each is a requirement of the search)."""


def family(rate: Fraction) -> str:
    """ "44.1 kHz" for whole multiples of 11.025 kHz, "48 kHz" for 8 kHz ones, else "other"."""
    if (rate / 11_025).denominator == 1:
        return "44.1 kHz"
    if (rate / 8_000).denominator == 1:
        return "48 kHz"
    return "other"


def _sample_rates(value: object) -> tuple[Fraction, ...]:
    rates = value if isinstance(value, list) else [value]
    if not rates:
        raise QuantityError('an empty list; give at least one, like ["48 kHz"]')
    if len(rates) > MAX_SAMPLE_RATES:
        raise QuantityError(f"lists {len(rates)} sampling rates; at most {MAX_SAMPLE_RATES}")
    return tuple(dict.fromkeys(parse_frequency(rate) for rate in rates))


def _setting_name(rate: Fraction) -> str:
    if rate.denominator == 1:
        return str(rate.numerator)
    return f"{rate.numerator}_{rate.denominator}"


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "audio"``: ``sample_rates``, ``master_clock``, ``slots``, ``slot_bits``…"""
    clock = read_clock(fields)
    rates = fields.take("sample_rates", _sample_rates)
    ratio = fields.take_int("master_clock", 256, minimum=1)
    if ratio not in MASTER_RATIOS:
        listed = ", ".join(map(str, MASTER_RATIOS))
        raise fields.error("master_clock", f"{ratio} fs is not one of {listed} (× fs)")
    slots = fields.take_int("slots", 2, minimum=1, maximum=32)
    slot_bits = fields.take_int("slot_bits", 32, minimum=8, maximum=32)
    frame = slots * slot_bits
    if ratio % frame:
        raise fields.error(
            "master_clock",
            f"{ratio} fs does not divide to the bit clock {slots} × {slot_bits} = {frame} fs "
            "by a whole number",
        )
    divide = fields.take("divide", parse_integer_choices, range(1, 257))
    quality = fields.take_str("quality", "consumer", choices=tuple(QUALITIES))
    allowance, basis = read_allowance(fields, *QUALITIES[quality])
    requirements = tuple(
        ToleranceRate(
            peripheral=name,
            label=f"fs {format_hz(rate)}",
            setting=f"{name}.master_divide_{_setting_name(rate)}",
            target=rate,
            allowance=allowance,
            allowance_basis=basis,
            divisor=plain(times(divide, ratio), factor=ratio),
        )
        for rate in rates
    )
    families = ", ".join(f"{format_hz(rate)}: {family(rate)} family" for rate in rates)
    details = (
        ("master clock", f"{ratio} fs"),
        ("bit clock", f"{frame} fs ({slots} slots × {slot_bits} bits), master ÷ {ratio // frame}"),
        ("families", families),
        ("allowance", format_relative(allowance)),
    )
    return Peripheral(name, "audio", clock, requirements, details)
