"""The built-in catalog of common oscillator frequencies (``data/catalog.toml``)."""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from fractions import Fraction
from functools import cache
from importlib import resources

__all__ = ["CatalogGroup", "catalog_groups", "catalog_frequencies"]


@dataclass(frozen=True)
class CatalogGroup:
    """A named group of frequencies and why the trade stocks them."""

    name: str
    why: str
    frequencies: tuple[Fraction, ...]
    """Frequencies in hertz, in file order."""


@cache
def catalog_groups() -> tuple[CatalogGroup, ...]:
    """Every group of the bundled catalog, in file order."""
    text = resources.files("clockplan").joinpath("data/catalog.toml").read_text(encoding="utf-8")
    table = tomllib.loads(text)
    return tuple(
        CatalogGroup(group["name"], group["why"], tuple(Fraction(hz) for hz in group["hz"]))
        for group in table["group"]
    )


@cache
def catalog_frequencies() -> tuple[Fraction, ...]:
    """All catalog frequencies without repeats, in catalog order (the last tie-breaker)."""
    seen: dict[Fraction, None] = {}
    for group in catalog_groups():
        for frequency in group.frequencies:
            seen.setdefault(frequency)
    return tuple(seen)
