"""Exact quantities: the one grammar for numbers, units, ranges, lists and divider chains.

Every value leaves this module as an ``int`` or a ``fractions.Fraction``; floats
appear only in the ``format_*`` helpers, which are for display. The scenario loader, every
command and the quick tools read their input here, so one text means one thing everywhere:

* a number is decimal, optionally with a power of ten: ``11.0592``, ``1e6``;
* a quantity is a number and a unit from :data:`UNITS` (``"12 MHz"``, ``"18pF"``);
* a range is two values joined by ``..`` (``"1 MHz..4 MHz"``, ``"1..63"``, ``"-20..70"``);
* a comma always separates the items of a list: alternatives or values
  (``"1,2,4"``, ``"9600, 115200"``);
* a divider chain's stages are joined by ``x`` or ``×`` (``"pow2 0..9 x 1..65535"``).

Unit names are read without regard to case (``khz``, ``KOHM``), except the prefix letters
m and M, which must be written as they are: m is milli, M is mega. After a milli prefix
the name must also be exact ("mHz", "mW"), so the common slip "mhz" is refused rather than
read as millihertz.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from fractions import Fraction
from typing import Literal

from clockplan.errors import ClockplanError
from clockplan.text_safety import describe_character, first_odd_character, quoted

__all__ = [
    "UNITS",
    "Dimension",
    "QuantityError",
    "parse_frequency",
    "parse_frequency_list",
    "parse_frequency_range",
    "parse_relative",
    "parse_capacitance",
    "parse_quantity",
    "parse_positive_quantity",
    "parse_integer_choices",
    "parse_stages",
    "parse_whole",
    "parse_cycles",
    "parse_number",
    "split_list",
    "split_range",
    "format_hz",
    "format_ppm",
    "format_relative",
    "exact_string",
    "parse_exact_string",
    "check_plain_text",
    "WholeChoices",
    "parse_temperature_range",
    "RATIO_STEP",
    "ratio_up",
    "ratio_down",
]

Dimension = Literal[
    "frequency",
    "relative",
    "capacitance",
    "resistance",
    "transconductance",
    "power",
    "voltage",
    "inductance",
    "temperature",
    "time",
]

_MILLI, _MICRO, _NANO = Fraction(1, 10**3), Fraction(1, 10**6), Fraction(1, 10**9)
_PREFIXES: dict[str, Fraction] = {
    "f": Fraction(1, 10**15),
    "p": Fraction(1, 10**12),
    "n": _NANO,
    "u": _MICRO,
    "µ": _MICRO,
    "m": _MILLI,
    "": Fraction(1),
    "k": Fraction(10**3),
    "M": Fraction(10**6),
    "G": Fraction(10**9),
}
"""SI prefixes a unit may carry ("u" stands for "µ", which keyboards lack)."""


def _prefixed(names: Sequence[str], prefixes: Sequence[str]) -> dict[str, Fraction]:
    """Every ``prefix + name`` with its factor, in the order the prefixes are given."""
    return {prefix + name: _PREFIXES[prefix] for prefix in prefixes for name in names}


UNITS: dict[Dimension, dict[str, Fraction]] = {
    "frequency": _prefixed(["Hz"], ["m", "", "k", "M", "G"])
    | {"k": Fraction(10**3), "M": Fraction(10**6), "G": Fraction(10**9)},
    "relative": {"ppm": Fraction(1, 10**6), "ppb": Fraction(1, 10**9), "%": Fraction(1, 100)},
    "capacitance": _prefixed(["F"], ["", "u", "µ", "n", "p", "f"]),
    "resistance": _prefixed(["ohm", "ohms", "Ω"], ["", "k", "M"]),
    "transconductance": _prefixed(["A/V", "S"], ["", "m", "u", "µ"]),
    "power": _prefixed(["W"], ["", "m", "u", "µ", "n"]),
    "voltage": _prefixed(["V"], ["", "m"]),
    "inductance": _prefixed(["H"], ["", "m", "u", "µ", "n"]),
    "temperature": {"°C": Fraction(1), "C": Fraction(1)},
    "time": {"s": Fraction(1), "min": Fraction(60), "h": Fraction(3600)},
}
"""The one unit table: every unit each dimension accepts and its exact factor to the base
unit (hertz, a plain ratio, farads, ohms, siemens, watts, volts, henries, °C, seconds).
A frequency may be written with its prefix alone ("44.1k", "12M"): k, M and G stand for
kHz, MHz and GHz."""

FREQUENCY_UNITS = UNITS["frequency"]
"""Frequency units and their exact factor to hertz (the shorthand k, M, G included)."""

_EXAMPLES: dict[Dimension, str] = {
    "frequency": '"12 MHz"',
    "relative": '"20 ppm" or "0.5 %"',
    "capacitance": '"18 pF"',
    "resistance": '"40 ohm"',
    "transconductance": '"10 mA/V"',
    "power": '"100 uW"',
    "voltage": '"1 V"',
    "inductance": '"10 uH"',
    "temperature": '"25 °C"',
    "time": '"60 s"',
}

_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_QUANTITY = re.compile(rf"^\s*({_NUMBER})\s*([^\d\s.+-][^\s]*)?\s*$", re.ASCII)
_RANGE = re.compile(r"^\s*(.+?)\s*\.\.\s*(.+?)\s*$", re.ASCII)
_POW2 = re.compile(r"^\s*pow2\s+(\d+)(?:\s*\.\.\s*(\d+))?\s*$", re.ASCII)
_INT = re.compile(r"^\s*[+-]?\d+\s*$", re.ASCII)
_CYCLES = re.compile(r"^\s*(?:2\s*\*\*\s*(\d+)|(\d+))\s*cycles?\s*$", re.ASCII)
_STAGE_MARK = re.compile(r"(?<!\S)[xX](?!\S)|×")
"""What joins a divider chain's stages: an x standing alone between spaces, or a ×."""

WholeChoices = range | tuple[int, ...]
"""A whole-number setting's allowed values: a ``range`` or a sorted tuple (the scenario's
divisor type, ``peripherals.base.Divisors``, which this module cannot import)."""

MAX_CHOICES = 1_000_000
"""The most integer choices one setting may list; more is a mistake or an explosion."""
MAX_CHOICE = 2**62
"""The largest value an integer setting may take: past it no 64-bit model can hold it."""
MAX_NUMBER_DIGITS = 100
"""The most digits (and the largest power of ten) a written number may have: past it,
exact arithmetic would spend minutes on a number no board needs."""
LOWEST_FREQUENCY = Fraction(1, 1000)
"""1 mHz: the slowest frequency a scenario may name (a tick of once in 17 minutes)."""
RATIO_STEP = Fraction(1, 10**9)
"""The finest relative error a scenario's budgets and allowances keep (1 ppb, 0.001 ppm):
finer fractions swell the model's integers past 64 bits. Budgets round up to it and
allowances down, so a plan is never accepted on the rounding."""
HIGHEST_FREQUENCY = Fraction(10**12)
"""1 THz: the fastest frequency a scenario may name, far above any clock on a board."""


class QuantityError(ValueError, ClockplanError):
    """A text could not be read as the quantity that was expected."""


def check_plain_text(text: str) -> str:
    """``text``, refused when it holds a control character (a line break, a tab, an escape)
    or a digit other than 0-9: "１２" and "١٢" look like twelve but are not what was meant."""
    for character in text:
        if not character.isprintable():
            raise QuantityError(
                f"{quoted(text)} holds {describe_character(character)}; write it on one line "
                "with spaces only"
            )
        if character.isdigit() and not character.isascii():
            raise QuantityError(
                f"{quoted(text)} holds {describe_character(character)}; write numbers with "
                "the digits 0-9"
            )
    return text


def parse_number(text: str | int | float) -> Fraction:
    """Read a plain number exactly: ``"11.0592"`` -> ``Fraction(110592, 10000)``.

    Floats from TOML are read through their shortest decimal repr, so ``0.1``
    means one tenth, as the user wrote it.
    """
    if isinstance(text, bool):
        raise QuantityError(f"{_short(text)} is not a number")
    if isinstance(text, int):
        return Fraction(text)
    if isinstance(text, float):
        if text != text or text in (float("inf"), float("-inf")):
            raise QuantityError(f"{_short(text)} is not a finite number")
        return _exact(repr(text))
    if not isinstance(text, str):
        raise QuantityError(f"{quoted(text)} is not a number")
    if not re.fullmatch(rf"\s*{_NUMBER}\s*", check_plain_text(text), re.ASCII):
        raise QuantityError(f"{quoted(text)} is not a number")
    return _exact(text.strip())


def _exact(number: str) -> Fraction:
    """``Fraction(number)`` for text matching ``_NUMBER``, refusing absurdly long or large ones."""
    mantissa, _, exponent = number.lower().partition("e")
    digits = sum(character.isdigit() for character in mantissa)
    if (
        digits > MAX_NUMBER_DIGITS
        or len(exponent) > 6
        or abs(int(exponent or 0)) > MAX_NUMBER_DIGITS
    ):
        raise QuantityError(
            f"{_short(number)} has more than {MAX_NUMBER_DIGITS} digits or a power of ten past "
            f"±{MAX_NUMBER_DIGITS}; no quantity on a board needs that"
        )
    return Fraction(number)


def _short(text: object) -> str:
    """The value quoted for an error message: escaped and cut to a readable length."""
    return quoted(text)


def parse_quantity(text: object, dimension: Dimension, *, bare_unit: str | None = None) -> Fraction:
    """Read a number with a unit of ``dimension`` to an exact value in base units.

    ``bare_unit`` names the unit a plain number (no unit written) is taken in;
    without it a unit is required.

    >>> parse_quantity("11.0592 MHz", "frequency")
    Fraction(11059200, 1)
    """
    table = UNITS[dimension]
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        value = parse_number(text)
        if bare_unit is None:
            raise QuantityError(f"{_short(text)} has no unit; write it like {_EXAMPLES[dimension]}")
        return value * table[bare_unit]
    if not isinstance(text, str):
        raise QuantityError(f"{_short(text)} is not a {dimension} such as {_EXAMPLES[dimension]}")
    match = _QUANTITY.match(check_plain_text(text))
    if not match:
        raise QuantityError(f"{_short(text)} is not a {dimension} such as {_EXAMPLES[dimension]}")
    number, unit = match.groups()
    if unit is None:
        if bare_unit is None:
            raise QuantityError(f"{_short(text)} has no unit; write it like {_EXAMPLES[dimension]}")
        unit = bare_unit
    factor = _lookup_unit(unit, table)
    if factor is None:
        raise QuantityError(_unknown_unit(text, unit, table))
    return _exact(number) * factor


def parse_positive_quantity(text: object, dimension: Dimension) -> Fraction:
    """Read a quantity of ``dimension`` that must be above zero (a resistance, a power)."""
    value = parse_quantity(text, dimension)
    if value <= 0:
        raise QuantityError(f"{_short(text)} is not a positive {dimension}")
    return value


def _lookup_unit(unit: str, table: dict[str, Fraction]) -> Fraction | None:
    """The unit's factor: the exact spelling, else the one unit :func:`_same_unit` allows."""
    if unit in table:
        return table[unit]
    return next((factor for name, factor in table.items() if _same_unit(unit, name)), None)


def _same_unit(written: str, name: str) -> bool:
    """Whether ``written`` names unit ``name`` up to case, where case does not decide.

    The prefix letters m (milli) and M (mega) keep their case, and after a milli prefix the
    rest keeps its own too: "MHZ" is megahertz, "mhz" is neither (milli or mega?).
    """
    if written.lower() != name.lower():
        return False
    if written[0] in "mM" or name[0] in "mM":
        return written[0] == name[0] and (written[0] != "m" or written == name)
    return True


def _unknown_unit(text: str, unit: str, table: dict[str, Fraction]) -> str:
    """Why ``unit`` is not known, naming an odd character (a Cyrillic "М" looks like "M")."""
    known = ", ".join(table)
    start = f"{_short(text)} has unit {_short(unit)}"
    odd = first_odd_character(unit)
    if odd is not None:
        return f"{start}, whose {describe_character(odd)} is not a Latin letter; expected {known}"
    if unit.lower() == "mhz":
        return f'{start}; write "MHz" for megahertz or "mHz" for millihertz'
    return f"{start}; expected one of {known}"


def parse_frequency(text: object, *, bare_unit: str | None = None) -> Fraction:
    """Read a frequency with its unit, in hertz, between 1 mHz and 1 THz.

    ``bare_unit`` names the unit a plain number is taken in (a rate's or a baud's "Hz").
    """
    value = parse_quantity(text, "frequency", bare_unit=bare_unit)
    if value <= 0:
        raise QuantityError(f"{_short(text)} is not a positive frequency")
    if not LOWEST_FREQUENCY <= value <= HIGHEST_FREQUENCY:
        raise QuantityError(
            f"{_short(text)} is implausible; expected a frequency between 1 mHz and 1 THz"
        )
    return value


def split_list(text: str, what: str) -> list[str]:
    """The comma-separated items of ``text``, stripped; refuses an empty list or item."""
    items = [item.strip() for item in check_plain_text(text).split(",")]
    if not any(items):
        raise QuantityError(f"{_short(text)} is an empty list; give at least one {what}")
    if not all(items):
        raise QuantityError(f"{_short(text)} has an empty item; separate items with one comma")
    return items


def split_range(text: object, example: str) -> tuple[str, str]:
    """The two ends of ``"low..high"``, stripped; ``example`` shows the form in the error.

    Exactly two dots join the ends: "-20...70" is refused, not read as -20 to 0.70.
    """
    if not isinstance(text, str):
        raise QuantityError(f"{_short(text)} is not a range such as {example}")
    ends = check_plain_text(text).split("..")
    if len(ends) != 2 or "..." in text or not all(end.strip() for end in ends):
        raise QuantityError(f"{_short(text)} is not a range such as {example}")
    return ends[0].strip(), ends[1].strip()


def parse_frequency_list(text: str, *, bare_unit: str | None = None) -> tuple[Fraction, ...]:
    """Read comma-separated frequencies, "9600,115200" or "48k, 44.1k"; repeats are dropped."""
    items = split_list(text, "frequency")
    return tuple(dict.fromkeys(parse_frequency(item, bare_unit=bare_unit) for item in items))


def parse_frequency_range(
    text: object, *, bare_unit: str | None = None
) -> tuple[Fraction, Fraction]:
    """Read ``"1 MHz .. 2 MHz"`` (or ``"1M..2M"``) to ``(low, high)`` in hertz, low <= high."""
    low_text, high_text = split_range(text, '"1 MHz .. 2 MHz"')
    low = parse_frequency(low_text, bare_unit=bare_unit)
    high = parse_frequency(high_text, bare_unit=bare_unit)
    if low > high:
        raise QuantityError(f"{_short(text)} runs backwards; write the low end first")
    return low, high


def parse_relative(text: object) -> Fraction:
    """Read a non-negative relative quantity ("20 ppm", "0.5 %") as a plain ratio."""
    value = parse_quantity(text, "relative")
    if value < 0:
        raise QuantityError(f'{_short(text)} is negative; give the size of the band, like "20 ppm"')
    if value > 1:
        raise QuantityError(
            f"{_short(text)} is more than 100 %; expected a share between 0 and 100 %"
        )
    return value


def ratio_up(value: Fraction) -> Fraction:
    """``value`` rounded up to a whole number of :data:`RATIO_STEP` (an error budget)."""
    return -((-value) // RATIO_STEP) * RATIO_STEP


def ratio_down(value: Fraction) -> Fraction:
    """``value`` rounded down to a whole number of :data:`RATIO_STEP` (an allowance)."""
    return (value // RATIO_STEP) * RATIO_STEP


def parse_capacitance(text: object) -> Fraction:
    """Read a non-negative capacitance with its unit, in farads."""
    value = parse_quantity(text, "capacitance")
    if value < 0:
        raise QuantityError(f"{_short(text)} is a negative capacitance")
    return value


def parse_integer_choices(value: object, *, minimum: int = 1) -> WholeChoices:
    """Read an integer setting's allowed values, sorted and without repeats.

    A span ``"a..b"`` stays a ``range`` (compact, exact); anything else is a tuple.

    Accepts an integer, a list of integers, ``"a..b"`` or ``"pow2 a..b"``
    (2**a … 2**b) or ``"pow2 n"`` (exactly 2**n), or a text listing several of them
    separated by commas (``"1,2,4"``, ``"pow2 0..3, 12"``: their union).

    >>> parse_integer_choices("pow2 0..3")
    (1, 2, 4, 8)
    """
    if isinstance(value, bool):
        raise QuantityError(f'{_short(value)} is not a whole number, a list, "a..b" or "pow2 a..b"')
    if isinstance(value, int):
        values: Sequence[int] = [value]
    elif isinstance(value, list):
        if not value:
            raise QuantityError("an empty list allows nothing; give at least one value")
        if not all(isinstance(v, int) and not isinstance(v, bool) for v in value):
            raise QuantityError(f"{_short(value)} must list whole numbers only")
        values = value
    elif isinstance(value, str):
        values = _parse_integer_text(value)
    else:
        raise QuantityError(f'{_short(value)} is not a whole number, a list, "a..b" or "pow2 a..b"')
    low, high = (values[0], values[-1]) if isinstance(values, range) else (min(values), max(values))
    if low < minimum:
        raise QuantityError(f"{low} is below the smallest allowed value {minimum}")
    if high > MAX_CHOICE:
        raise QuantityError(f"{high} goes past 2**62, more than any divider holds")
    if isinstance(values, range):
        return values
    return tuple(sorted(set(values)))


def _parse_integer_text(text: str) -> Sequence[int]:
    """A whole number, "a..b", "pow2 n", "pow2 a..b", or a comma list of them (their union)."""
    if "|" in check_plain_text(text):
        raise QuantityError(f"{_short(text)} uses a bar; separate alternatives with commas")
    if "," not in text:
        return _parse_integer_item(text)
    union: set[int] = set()
    for item in split_list(text, "whole number"):
        union.update(_parse_integer_item(item))
        if len(union) > MAX_CHOICES:
            raise QuantityError(f"{_short(text)} allows more than {MAX_CHOICES} values")
    return sorted(union)


def _parse_integer_item(text: str) -> Sequence[int]:
    if len(text) > MAX_NUMBER_DIGITS:
        raise QuantityError(f'{_short(text)} is too long for a whole number, "a..b" or "pow2 a..b"')
    pow2 = _POW2.match(text)
    if pow2:
        first = int(pow2.group(1))
        last = int(pow2.group(2)) if pow2.group(2) is not None else first
        if first > last:
            raise QuantityError(f"{_short(text)} runs backwards; write the low end first")
        if last > 62:
            raise QuantityError(f"{_short(text)} goes past 2**62, more than any divider holds")
        return [2**k for k in range(first, last + 1)]
    span = _RANGE.match(text)
    if span and _INT.match(span.group(1)) and _INT.match(span.group(2)):
        low, high = int(span.group(1)), int(span.group(2))
        if low > high:
            raise QuantityError(f"{_short(text)} runs backwards; write the low end first")
        if high - low + 1 > MAX_CHOICES:
            raise QuantityError(
                f"{_short(text)} allows {high - low + 1} values; at most {MAX_CHOICES}"
            )
        return range(low, high + 1)
    if _INT.match(text):
        return [int(text)]
    raise QuantityError(f'{_short(text)} is not a whole number, "a..b", "pow2 a..b" or a list')


def parse_stages(text: str) -> tuple[tuple[str, WholeChoices], ...]:
    """Read a divider chain: stages joined by ``x`` or ``×``, each as its text and choices.

    A stage is anything :func:`parse_integer_choices` reads as text ("pow2 15", "1..128",
    "1,8,64"): ``"pow2 0..9 x 1..65535"`` is two stages, ``"128,256"`` one stage with a
    choice of two divisors.
    """
    stages = [stage.strip() for stage in _STAGE_MARK.split(check_plain_text(text))]
    if not text.strip() or not all(stages):
        raise QuantityError(f'{_short(text)} has an empty stage; join stages with " x "')
    return tuple((stage, parse_integer_choices(stage)) for stage in stages)


def parse_whole(text: str, *, minimum: int, maximum: int) -> int:
    """Read a whole number from ``minimum`` to ``maximum`` written with the digits 0-9."""
    digits = check_plain_text(text).strip()
    if not (digits.isascii() and digits.isdigit()) or len(digits) > MAX_NUMBER_DIGITS:
        raise QuantityError(f"{_short(text)} is not a whole number from {minimum} to {maximum}")
    value = int(digits)
    if value < minimum:
        raise QuantityError(f"{_short(text)} is less than {minimum}")
    if value > maximum:
        raise QuantityError(f"{_short(text)} is more than {maximum}")
    return value


def parse_cycles(text: str, *, limit: int) -> int | None:
    """Read a count of cycles, ``"1966080 cycles"`` or ``"2**21 cycles"``; None when the text
    is not written in cycles (it may be a duration). A count above ``limit`` comes back as
    ``limit + 1``, so the caller refuses it in its own words without building a huge number."""
    match = _CYCLES.match(check_plain_text(text))
    if match is None:
        return None
    power, plain = match.groups()
    if power is not None:
        exponent = power.lstrip("0") or "0"
        too_long = (
            len(exponent) > len(str(limit.bit_length())) or int(exponent) >= limit.bit_length()
        )
        return limit + 1 if too_long else min(2 ** int(exponent), limit + 1)
    digits = plain.lstrip("0") or "0"
    return limit + 1 if len(digits) > len(str(limit)) else min(int(digits), limit + 1)


def parse_temperature_range(text: object) -> tuple[Fraction, Fraction]:
    """Read ``"-20..70"`` or ``"-20 °C .. 70 °C"`` to (low, high) in °C, low <= high.

    A Unicode minus sign (−) reads as "-"; a plain number is in °C.
    """
    example = '"-20..70"'
    if not isinstance(text, str):
        raise QuantityError(f"{_short(text)} is not a range in °C such as {example}")
    low_text, high_text = split_range(check_plain_text(text).replace("\u2212", "-"), example)
    low = parse_quantity(low_text, "temperature", bare_unit="°C")
    high = parse_quantity(high_text, "temperature", bare_unit="°C")
    if low > high:
        raise QuantityError(f"{_short(text)} runs backwards; write the low end first")
    if low < -273 or high > 1000:
        raise QuantityError(
            f"{_short(text)} is not a plausible temperature range in °C (-273..1000)"
        )
    return low, high


def exact_string(value: Fraction | int) -> str:
    """Write an exact value as ``"48000000"`` or ``"8400000/73"`` (the JSON form)."""
    value = Fraction(value)
    return (
        str(value.numerator) if value.denominator == 1 else f"{value.numerator}/{value.denominator}"
    )


def parse_exact_string(text: str) -> Fraction:
    """Read back what :func:`exact_string` wrote."""
    return Fraction(text)


def format_hz(value: Fraction | int, *, digits: int = 7) -> str:
    """Show a frequency with a readable unit: ``format_hz(11059200)`` -> ``"11.0592 MHz"``."""
    value = Fraction(value)
    for unit in ("GHz", "MHz", "kHz"):
        if abs(value) >= FREQUENCY_UNITS[unit]:
            scaled = value / FREQUENCY_UNITS[unit]
            return f"{_trim(scaled, digits)} {unit}"
    return f"{_trim(value, digits)} Hz"


LARGEST_SHOWN_EXACTLY = 10**15
"""Past this a value is shown in powers of ten: its digits no longer help (and a float or a
decimal string of it may not even exist)."""


def _trim(value: Fraction, digits: int) -> str:
    if abs(value) >= LARGEST_SHOWN_EXACTLY:
        return _scientific(value, digits)
    if value.denominator == 1:
        return str(value.numerator)
    text = f"{float(value):.{digits}f}".rstrip("0").rstrip(".")
    exact = Fraction(text) == value
    return text if exact else f"{float(value):.{digits}g}".rstrip("0").rstrip(".") + "…"


def _scientific(value: Fraction, digits: int) -> str:
    """``value`` as ``"1.234567e20"``, rounded to ``digits`` significant digits ("…" when
    rounded), for a value of any size: only integers are used, never a float."""
    magnitude = abs(value)
    # 10**exponent <= magnitude < 10**(exponent + 1), from the bit lengths, then corrected.
    bits = magnitude.numerator.bit_length() - magnitude.denominator.bit_length()
    exponent = max(0, int(bits * 0.30102999566398120) - 1)
    while magnitude >= Fraction(10) ** (exponent + 1):
        exponent += 1
    scaled = magnitude * 10 ** (digits - 1) / Fraction(10) ** exponent
    mantissa = round(scaled)
    if mantissa == 10**digits:  # 9.9999999 rounded up to 10
        mantissa, exponent = mantissa // 10, exponent + 1
    shown = str(mantissa)
    text = f"{shown[0]}.{shown[1:]}".rstrip("0").rstrip(".")
    sign = "-" if value < 0 else ""
    return f"{sign}{text}e{exponent}" + ("" if scaled == mantissa else "…")


def _finite(value: Fraction | float) -> float:
    """``float(value)``, saturating at ±inf instead of raising for values past a float."""
    try:
        return float(value)
    except OverflowError:
        return float("inf") if value > 0 else float("-inf")


def format_ppm(value: Fraction | float, *, signed: bool = False) -> str:
    """Show a ratio in ppm, e.g. ``format_ppm(Fraction(1, 400))`` -> ``"2500 ppm"``."""
    ppm = _finite(value) * 1e6
    text = f"{ppm:+.3f}" if signed else f"{ppm:.3f}"
    text = text.rstrip("0").rstrip(".")
    return f"{text} ppm"


def format_relative(value: Fraction | float, *, signed: bool = False) -> str:
    """Show a ratio in ppm below 0.1 % and in percent above, as engineers write them."""
    if abs(_finite(value)) >= 1e-3:
        percent = _finite(value) * 100
        text = f"{percent:+.4f}" if signed else f"{percent:.4f}"
        return text.rstrip("0").rstrip(".") + " %"
    return format_ppm(value, signed=signed)
