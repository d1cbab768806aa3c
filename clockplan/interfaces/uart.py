"""UART: baud rates from a kernel clock through oversampling and a (fractional) divisor.

Baud = kernel / (oversampling × divisor), divisor = whole part + fraction / 2**fraction_bits.

Default allowance, derived: the receiver restarts timing on the start bit's
falling edge, which it finds only to within one sample (1/S bit at S× oversampling),
and votes on the samples around mid-bit. It must still land inside the last data
or parity bit's cell (the stop bit's own sample tolerates the rest). With
D = data + parity bits, the slowest and fastest incoming rates relative to the
receiver's own are

    R_slow = (D + 1)·S / (S − 1 + D·S + S/2)
    R_fast = (D + 2)·S / ((D + 1)·S + S/2 + 1)

(Source: the "asynchronous operational range" derivation published in
microcontroller serial-port datasheets; reproduces their tables, e.g. 8N1 at 16×:
144/151 and 160/153.) The link tolerates the smaller of 1 − R_slow and R_fast − 1
as total mismatch between the two ends; common practice splits it evenly, so each
end gets half: 8N1 at 16× → 7/153 / 2 = 2.288 %.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.interfaces.base import Divisors, Peripheral, Requirement, times
from clockplan.interfaces.common import read_allowance, read_clock
from clockplan.quantities import (
    HIGHEST_FREQUENCY,
    MAX_CHOICES,
    QuantityError,
    format_relative,
    parse_integer_choices,
)

KINDS = ("uart",)
PARITIES = ("none", "even", "odd", "mark", "space")
MAX_BAUD_RATES = 64
"""The most baud rates one UART may list (each is a requirement of the search)."""


def link_mismatch_limit(data_bits: int, parity: bool, oversampling: int) -> Fraction:
    """Largest total rate mismatch between two ends that a frame survives (see module doc)."""
    bits = data_bits + int(parity)
    samples = oversampling
    slow = Fraction((bits + 1) * samples, samples - 1 + bits * samples + Fraction(samples, 2))
    fast = Fraction((bits + 2) * samples, (bits + 1) * samples + Fraction(samples, 2) + 1)
    return min(1 - slow, fast - 1)


def per_end_allowance(data_bits: int, parity: bool, oversampling: int) -> Fraction:
    """Each end's share of the link limit: half, as common practice splits it."""
    return link_mismatch_limit(data_bits, parity, oversampling) / 2


def _baud_list(value: object) -> tuple[int, ...]:
    rates = value if isinstance(value, list) else [value]
    if not rates:
        raise QuantityError("an empty list of baud rates; give at least one, like [115200]")
    if len(rates) > MAX_BAUD_RATES:
        raise QuantityError(f"lists {len(rates)} baud rates; at most {MAX_BAUD_RATES}")
    for rate in rates:
        if isinstance(rate, bool) or not isinstance(rate, int) or rate <= 0:
            raise QuantityError(f"{rate!r} is not a baud rate; give whole numbers like 115200")
        if rate > HIGHEST_FREQUENCY:
            raise QuantityError(f"{rate} is implausible; expected a baud rate up to 10**12")
    return tuple(dict.fromkeys(rates))


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "uart"``: ``baud``, ``oversampling``, ``divisor``, ``fraction_bits``, frame."""
    clock = read_clock(fields)
    bauds = fields.take("baud", _baud_list)
    oversampling = fields.take_int("oversampling", 16, minimum=4, maximum=64)
    if oversampling % 2:
        raise fields.error("oversampling", f"{oversampling} is odd; receivers sample an even count")
    fraction_bits = fields.take_int("fraction_bits", 0, minimum=0, maximum=16)
    divisor = fields.take("divisor", parse_integer_choices, range(1, 65536))
    data_bits = fields.take_int("data_bits", 8, minimum=5, maximum=9)
    parity = fields.take_str("parity", "none", choices=PARITIES)
    stop_bits = fields.take_int("stop_bits", 1, minimum=1, maximum=2)
    limit = per_end_allowance(data_bits, parity != "none", oversampling)
    frame = f"{data_bits}{parity[0].upper()}{stop_bits}"
    allowance, basis = read_allowance(
        fields, limit, f"derived for {frame} at {oversampling}x: half the link limit"
    )
    scale = 2**fraction_bits
    _check_counts(fields, divisor, scale)
    counts = _scaled(divisor, scale)
    requirements = tuple(
        Requirement(
            peripheral=name,
            label=f"{baud} baud",
            setting=f"{name}.divisor_{baud}",
            target=Fraction(baud),
            allowance=allowance,
            allowance_basis=basis,
            numerator=scale,
            divisors=times(counts, oversampling),
            divisor_scale=oversampling * scale,
            unit="baud",
        )
        for baud in bauds
    )
    details = (
        ("frame", frame),
        ("oversampling", f"{oversampling}x"),
        ("divisor", f"{fraction_bits} fraction bits" if fraction_bits else "whole numbers"),
        ("allowance per end", format_relative(allowance)),
    )
    return Peripheral(name, "uart", clock, requirements, details)


def _check_counts(fields: Fields, divisor: Divisors, scale: int) -> None:
    """Refuse a divisor list that, counted in 1/scale steps, would explode."""
    compact = isinstance(divisor, range) and divisor.step == 1
    if not compact and len(divisor) * scale > MAX_CHOICES:
        raise fields.error(
            "divisor",
            f"lists {len(divisor)} values, {len(divisor) * scale} with the fraction bits; "
            f'at most {MAX_CHOICES} (write a range like "1..4095")',
        )


def _scaled(divisor: range | tuple[int, ...], scale: int) -> range | tuple[int, ...]:
    """Divisor counts in 1/scale steps: whole values a..b become a·scale .. b·scale."""
    if scale == 1:
        return divisor
    if isinstance(divisor, range) and divisor.step == 1:
        return range(divisor.start * scale, (divisor.stop - 1) * scale + 1)
    return tuple(value * scale + part for value in divisor for part in range(scale))
