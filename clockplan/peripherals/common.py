"""Keys shared by every peripheral kind (``from``, an ``allowance`` override) and flags."""

from __future__ import annotations

from fractions import Fraction

from clockplan._fields import Fields
from clockplan.quantities import QuantityError, parse_relative, ratio_down

__all__ = ["read_clock", "read_allowance", "parse_flag"]


def read_clock(fields: Fields) -> str:
    """The node feeding the peripheral (key ``from``)."""
    return fields.take_str("from")


def read_allowance(fields: Fields, default: Fraction | None, basis: str) -> tuple[Fraction, str]:
    """The allowance: the scenario's ``allowance`` when given, else the kind's default."""
    if fields.has("allowance"):
        value = ratio_down(fields.take("allowance", parse_relative))
        if value <= 0:
            raise fields.error("allowance", "must be above zero (at least 1 ppb)")
        return value, "set in the scenario"
    fields.take("allowance", parse_relative, None)
    if default is None:
        raise fields.error("allowance", 'is missing; give the tolerance like "50 ppm"')
    return default, basis


def parse_flag(value: object) -> bool:
    """A yes-or-no key: TOML ``true`` or ``false`` only."""
    if not isinstance(value, bool):
        raise QuantityError(f"{value!r} is not true or false")
    return value
