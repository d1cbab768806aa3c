"""A clock plan: the chosen oscillator frequencies and every setting of the tree.

Settings are keyed by strings (they are what the JSON, the header and a what-if plan
name); this module is the only place that spells those keys.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

from clockplan._frozen import frozen

__all__ = [
    "Plan",
    "SettingValue",
    "pll_keys",
    "divider_key",
    "mux_key",
    "stage_key",
    "option_key",
    "node_settings",
]

SettingValue = int | str
"""A divider, multiplier or divisor count (int), or a mux's chosen input name (str)."""


@dataclass(frozen=True)
class Plan:
    """Oscillator frequencies (hertz) by source name, and settings by ``node.setting`` key."""

    sources: Mapping[str, Fraction]
    settings: Mapping[str, SettingValue]

    def __post_init__(self) -> None:
        object.__setattr__(self, "sources", frozen(self.sources))
        object.__setattr__(self, "settings", frozen(self.settings))

    def mux_input(self, mux: str) -> SettingValue | None:
        """The input a mux is set to (None when the plan does not say)."""
        return self.settings.get(mux_key(mux))


def pll_keys(name: str) -> tuple[str, str, str]:
    """Settings keys of a PLL: reference divider, multiplier (whole part), fraction."""
    return f"{name}.reference_divider", f"{name}.multiplier", f"{name}.fraction"


def divider_key(name: str) -> str:
    """Settings key of a divider's value."""
    return f"{name}.divide"


def mux_key(name: str) -> str:
    """Settings key of a mux's chosen input (its name, in a plan)."""
    return f"{name}.input"


def stage_key(setting: str, stage: str) -> str:
    """Settings key of one stage of a rate's divisor (a timer's prescaler, say)."""
    return f"{setting}.{stage}"


def option_key(setting: str) -> str:
    """Settings key of the option a rate chose among several (its index)."""
    return f"{setting}_option"


def node_settings(plan: Plan, name: str) -> dict[str, SettingValue]:
    """The settings of one node, keyed by the part after ``name.`` (``"divide"``)."""
    prefix = f"{name}."
    return {
        key[len(prefix) :]: value for key, value in plan.settings.items() if key.startswith(prefix)
    }
