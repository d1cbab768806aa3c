"""UART: baud rates from an input clock through oversampling and a (fractional) divisor.

Baud = input_clock / (oversampling × divisor), divisor = whole part + fraction / 2**fraction_bits.

Default allowance, derived. The receiver restarts timing on the start bit's falling
edge, which it finds only to within one sample (1/S bit at S× oversampling), and votes
on the samples around mid-bit. Both limits bind at the stop bit's samples: against a
slow sender the stop bit must have begun by the first sample of the vote, against a fast
one it must not have ended by the middle sample. With D = data + parity bits, the
slowest and fastest incoming rates relative to the receiver's own are

    R_slow = (D + 1)·S / (S − 1 + D·S + S_F)
    R_fast = (D + 2)·S / ((D + 1)·S + S_M)

with S_F = S/2 the first and S_M = S/2 + 1 the middle sample of the vote (Source: the
"asynchronous operational range" section of microcontroller serial-port datasheets,
which gives both formulas and tables they reproduce, e.g. 8N1 at 16×: 144/151 and
160/153).

Each end's share. A link carries data both ways, so each end's rate is checked against
the other's in both directions: with this end off by e_a and the far end by e_b, the
ratios (1 + e_a)/(1 + e_b) and (1 + e_b)/(1 + e_a) must both lie in [R_slow, R_fast].
Halving the link limit breaks this when the ends sit at opposite extremes, because
(1 + e)/(1 − e) exceeds 1 + 2e. With both ends allowed the same ±e the exact bound is

    e ≤ min((R_fast − 1)/(R_fast + 1), (1 − R_slow)/(1 + R_slow))

(8N1 at 16×: 7/313 ≈ 2.236 %; at 8×: 3/157 ≈ 1.911 %). When the far end's own tolerance
±t is known (key ``far_end_tolerance``), this end gets what the link leaves:

    e ≤ min(R_fast·(1 − t) − 1, 1 − R_slow·(1 + t), 1 − (1 + t)/R_fast, (1 − t)/R_slow − 1)

(derived here from the same two limits; with t equal to the symmetric bound it gives that
bound back). The far end's receiver is taken to sample as this one does.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import Divisors, Peripheral, ToleranceRate, plain, times
from clockplan.peripherals.common import read_allowance, read_clock
from clockplan.quantities import (
    HIGHEST_FREQUENCY,
    MAX_CHOICES,
    QuantityError,
    format_relative,
    parse_integer_choices,
    parse_relative,
)

KINDS = ("uart",)
PARITIES = ("none", "even", "odd", "mark", "space")
MAX_BAUD_RATES = 64
"""The most baud rates one UART may list (each is a requirement of the search)."""


def receiver_limits(data_bits: int, parity: bool, oversampling: int) -> tuple[Fraction, Fraction]:
    """(R_slow, R_fast): the slowest and fastest incoming rate a receiver accepts, as ratios."""
    bits = data_bits + int(parity)
    samples = oversampling
    first, middle = Fraction(samples, 2), Fraction(samples, 2) + 1
    slow = Fraction((bits + 1) * samples) / (samples - 1 + bits * samples + first)
    fast = Fraction((bits + 2) * samples) / ((bits + 1) * samples + middle)
    return slow, fast


def per_end_allowance(
    data_bits: int, parity: bool, oversampling: int, far_end: Fraction | None = None
) -> Fraction:
    """This end's largest deviation from nominal: both ends alike, or beside a known far end.

    Zero or less means the far end's tolerance leaves nothing (see the module docstring).
    """
    slow, fast = receiver_limits(data_bits, parity, oversampling)
    if far_end is None:
        return min((fast - 1) / (fast + 1), (1 - slow) / (1 + slow))
    return min(
        fast * (1 - far_end) - 1,
        1 - slow * (1 + far_end),
        1 - (1 + far_end) / fast,
        (1 - far_end) / slow - 1,
    )


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
    frame = f"{data_bits}{parity[0].upper()}{stop_bits}"
    allowance, basis = _allowance(fields, frame, data_bits, parity != "none", oversampling)
    scale = 2**fraction_bits
    _check_counts(fields, divisor, scale)
    counts = _scaled(divisor, scale)
    requirements = tuple(
        ToleranceRate(
            peripheral=name,
            label=f"{baud} baud",
            setting=f"{name}.divisor_{baud}",
            target=Fraction(baud),
            allowance=allowance,
            allowance_basis=basis,
            numerator=scale,
            divisor=plain(times(counts, oversampling), factor=oversampling * scale),
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


def _allowance(
    fields: Fields, frame: str, data_bits: int, parity: bool, oversampling: int
) -> tuple[Fraction, str]:
    """The ``allowance`` override, or this end's share with or without ``far_end_tolerance``."""
    derived = f"derived for {frame} at {oversampling}x"
    if not fields.has("far_end_tolerance"):
        limit = per_end_allowance(data_bits, parity, oversampling)
        return read_allowance(fields, limit, f"{derived}: equal ends at opposite extremes")
    if fields.has("allowance"):
        raise fields.error(
            "far_end_tolerance", "and allowance both set this end's allowance; give one"
        )
    far_end = fields.take("far_end_tolerance", parse_relative)
    limit = per_end_allowance(data_bits, parity, oversampling, far_end)
    if limit <= 0:
        whole = per_end_allowance(data_bits, parity, oversampling, Fraction(0))
        raise fields.error(
            "far_end_tolerance",
            f"{format_relative(far_end)} leaves nothing for this end: even with this end "
            f"exact, {frame} at {oversampling}x tolerates at most {format_relative(whole)} there",
        )
    basis = f"{derived}: what the far end's ±{format_relative(far_end)} leaves"
    return read_allowance(fields, limit, basis)


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
