"""A clock plan: the chosen oscillator frequencies and every setting of the tree."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

__all__ = ["Plan", "pll_keys", "SettingValue"]

SettingValue = int | str
"""A divider, multiplier or divisor count (int), or a mux's chosen input name (str)."""


@dataclass(frozen=True)
class Plan:
    """Oscillator frequencies (hertz) by source name, and settings by ``node.setting`` key."""

    sources: Mapping[str, Fraction]
    settings: Mapping[str, SettingValue]


def pll_keys(name: str) -> tuple[str, str, str]:
    """Settings keys of a PLL: reference divider, multiplier (whole part), fraction."""
    return f"{name}.reference_divider", f"{name}.multiplier", f"{name}.fraction"
