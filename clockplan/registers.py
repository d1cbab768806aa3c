"""How a chip's registers hold each setting: the fields a node has, and their encodings.

A scenario says, per clock or peripheral, how the chip writes a setting into its register
(``register = { divide = "log2", multiplier = "minus-one", input = { 0 = 2, 1 = 0 } }``):
the value itself, the value minus one, its base-2 logarithm, or a code from a table. Every
value the search may choose is checked against its encoding when the scenario is read, so
a plan never holds a setting its register cannot. The C header writes the encoded field.

A peripheral's fields are read from its requirements here and only here: ``divisor`` (the
divisor as the peripheral holds it, not multiplied by any oversampling), with ``fraction``
beside it when it counts fraction steps; ``prescaler`` and the segments of a bit timing;
the named stages of a timer.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction

from clockplan._fields import Fields, hint
from clockplan._frozen import FrozenDict, frozen
from clockplan.errors import ClockplanError
from clockplan.peripherals.base import Divisors, Option, Requirement, Stages, smallest
from clockplan.plan import SettingValue
from clockplan.quantities import QuantityError
from clockplan.text_safety import quoted

__all__ = [
    "RULES",
    "Encoding",
    "UnencodableError",
    "PLAIN",
    "read_register",
    "first_unencodable",
    "requirement_values",
    "held_fields",
    "HeldField",
]

RULES = ("value", "minus-one", "log2")
"""The named encodings; a table of codes is the fourth kind."""
MAX_CODES = 4096
"""The most entries one table of codes may hold."""
DERIVED_TIMING_SETTINGS = ("quanta",)
"""Settings of a bit timing that follow from the others and have no register field."""


class UnencodableError(ClockplanError):
    """A setting's value has no encoding in its register (a plan set by hand, say)."""


@dataclass(frozen=True)
class Encoding:
    """How one register field holds a setting: ``rule`` is one of RULES or ``"table"``."""

    rule: str = "value"
    codes: Mapping[int, int] = field(default_factory=FrozenDict)
    """The code of each value, for a table."""

    def problem(self, value: int) -> str:
        """Why ``value`` cannot be encoded, or ``""`` when it can."""
        if self.rule == "minus-one" and value < 1:
            return f"{value} minus one is below zero"
        if self.rule == "log2" and (value < 1 or value & (value - 1)):
            return f"{value} is not a power of two, so it has no log2"
        if self.rule == "table" and value not in self.codes:
            listed = ", ".join(map(str, self.codes))
            return f"{value} has no code in the table (it lists {listed})"
        return ""

    def encode(self, value: int) -> int:
        """The field the register holds for ``value`` (UnencodableError when it has none)."""
        if problem := self.problem(value):
            raise UnencodableError(problem)
        if self.rule == "minus-one":
            return value - 1
        if self.rule == "log2":
            return value.bit_length() - 1
        if self.rule == "table":
            return self.codes[value]
        return value

    def describe(self, value: int) -> str:
        """The plain value and how it became the field: ``"10 minus one"``, ``"log2 of 4"``."""
        return {
            "value": "",
            "minus-one": f"{value} minus one",
            "log2": f"log2 of {value}",
            "table": f"table code for {value}",
        }[self.rule]


PLAIN = Encoding()
"""A field that holds the value itself (the default)."""


def read_register(
    fields: Fields, values: Mapping[str, tuple[Divisors, ...]]
) -> Mapping[str, Encoding]:
    """The node's ``register`` table: an Encoding per field it names.

    ``values`` gives each field the node has and every set of values the search may choose
    for it; a field name it lacks gets "did you mean", and a value its encoding cannot hold
    is refused here, before any search.
    """
    if not values:
        raise fields.error("register", "this node has no settings for a register to hold")
    table = fields.sub("register")
    encodings = {}
    for name, allowed_sets in values.items():
        encoding = table.take(name, _encoding, None)
        if encoding is None:
            continue
        for allowed in allowed_sets:
            if (value := first_unencodable(encoding, allowed)) is not None:
                raise table.error(
                    name,
                    f"{encoding.problem(value)}, yet the search may choose {value}; "
                    "narrow the allowed values or change the encoding",
                )
        encodings[name] = encoding
    table.finish()
    return frozen(encodings)


def _encoding(value: object) -> Encoding:
    """One field's encoding: a rule's name, or a table ``{ value = code, … }``."""
    if isinstance(value, str):
        if value not in RULES:
            known = ", ".join(f'"{rule}"' for rule in RULES)
            raise QuantityError(
                f"{quoted(value)} is not {known} or a table of codes{hint(value, RULES)}"
            )
        return Encoding(value)
    if not isinstance(value, dict):
        raise QuantityError(
            'expected "value", "minus-one", "log2" or a table of codes like { 1 = 0, 2 = 4 }'
        )
    if not value:
        raise QuantityError("an empty table of codes holds nothing; give { value = code, … }")
    if len(value) > MAX_CODES:
        raise QuantityError(f"lists {len(value)} codes; at most {MAX_CODES}")
    codes: dict[int, int] = {}
    for key, code in value.items():
        if not key.isascii() or not key.isdigit() or len(key) > 19:
            raise QuantityError(f"{quoted(key)} is not a setting's value; give whole numbers")
        if isinstance(code, bool) or not isinstance(code, int) or not 0 <= code < 2**63:
            raise QuantityError(f"the code for {key} must be a whole number from 0, not {code!r}")
        if code in codes.values():
            twin = next(known for known, held in codes.items() if held == code)
            raise QuantityError(f"{twin} and {int(key)} both have code {code}")
        codes[int(key)] = code
    return Encoding("table", frozen(dict(sorted(codes.items()))))


def first_unencodable(encoding: Encoding, values: Divisors) -> int | None:
    """The first of ``values`` the encoding cannot hold, or None, without walking a range.

    log2: no three terms of an arithmetic progression are all powers of two (the third
    would be 2·second − first < 2·second), so the first three values tell. A table: a range
    longer than the table has a value outside it among its first len(table) + 1.
    """
    if encoding.rule == "value":
        return None
    if encoding.rule == "minus-one":
        return smallest(values) if smallest(values) < 1 else None
    looked_at = values
    if isinstance(values, range):
        enough = 3 if encoding.rule == "log2" else len(encoding.codes) + 1
        looked_at = values[:enough]
    return next((value for value in looked_at if encoding.problem(value)), None)


@dataclass(frozen=True)
class HeldField:
    """One value a peripheral's register holds for a rate, named for the header."""

    key: str
    """Dotted name the define is made from (``"console.divisor_115200.fraction"``)."""
    name: str
    """The field's name in the ``register`` table (``"fraction"``)."""
    value: int
    note: str = ""
    """What the value is, for people: ``"divisor 65.125, fraction 2/16"``."""


def requirement_values(requirement: Requirement) -> dict[str, tuple[Divisors, ...]]:
    """Every field a requirement's register holds, with the values the search may choose."""
    divisor = requirement.divisor
    if isinstance(divisor, Stages):
        return {name: (values,) for name, values in divisor.stages}
    fields: dict[str, tuple[Divisors, ...]] = {}
    for option in divisor.options:
        held = _divided(option.divisors, option.factor)
        if option.settings:
            fields["prescaler"] = (*fields.get("prescaler", ()), held)
            for name, value in option.settings:
                if name not in DERIVED_TIMING_SETTINGS:
                    fields[name] = (*fields.get(name, ()), (value,))
        else:
            fields["divisor"] = (*fields.get("divisor", ()), held)
            if requirement.numerator > 1:
                fields["fraction"] = (range(requirement.numerator),)
    return fields


def held_fields(
    requirement: Requirement,
    option: Option,
    settings: Mapping[str, SettingValue],
    held: Fraction,
    shown: str,
) -> list[HeldField]:
    """The register fields behind one rate, chosen with ``option``: its stages' values from
    ``settings`` (the plan's, by key), or ``held`` (the divisor as the peripheral holds it,
    ``shown`` as people read it) as a prescaler and bit-timing segments, as a whole part and
    a fraction, or as it is."""
    base = requirement.setting
    if isinstance(requirement.divisor, Stages):
        stages = requirement.divisor.stages
        keys = [(requirement.stage_setting(name), name) for name, _ in stages]
        return [HeldField(key, name, int(settings[key])) for key, name in keys]
    whole, steps = divmod(held * requirement.numerator, requirement.numerator)
    if steps.denominator != 1:
        raise UnencodableError(f"{base}: the divisor {held} is not a whole number of steps")
    if option.settings:
        timing = [
            HeldField(f"{base}.{name}", name, value)
            for name, value in option.settings
            if name not in DERIVED_TIMING_SETTINGS
        ]
        return [HeldField(f"{base}.prescaler", "prescaler", int(whole), option.label), *timing]
    if requirement.numerator > 1:
        fraction = f"{steps}/{requirement.numerator}"
        return [
            HeldField(
                f"{base}.whole", "divisor", int(whole), f"divisor {shown} = {whole} + {fraction}"
            ),
            HeldField(f"{base}.fraction", "fraction", int(steps), fraction),
        ]
    return [HeldField(base, "divisor", int(whole))]


def _divided(values: Divisors, scale: int) -> Divisors:
    """The whole parts of ``values`` ÷ ``scale``, keeping a range a range when it can."""
    if scale == 1:
        return values
    if isinstance(values, range) and values.step > 0 and values:
        if values.step <= scale:
            return range(values.start // scale, values[-1] // scale + 1)
        if values.step % scale == 0 and values.start % scale == 0:
            return range(values.start // scale, values[-1] // scale + 1, values.step // scale)
    return tuple(sorted({value // scale for value in values}))
