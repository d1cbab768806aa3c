"""What differs between two plans, node by node, compared exactly.

Oscillator and clock frequencies, every setting, and per peripheral rate the achieved rate,
the synthesis error and the share of the allowance; only what differs is listed.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from clockplan.evaluate import RateCheck
from clockplan.plan import SettingValue, node_settings
from clockplan.quantities import exact_string, format_hz, format_relative
from clockplan.result import RankedPlan
from clockplan.scenario import Scenario
from clockplan.text import format_rate, format_share, rate_verdict

__all__ = ["Side", "Change", "Value", "plan_changes"]

Value = str | int | float | None
"""A compared value as JSON holds it: an exact string, a setting, a float figure, or absent."""


@dataclass(frozen=True)
class Side:
    """One of the two plans compared."""

    scenario: Scenario
    ranked: RankedPlan
    closest: bool = False
    """No plan meets every allowance: this is the closest one (least worst share)."""


@dataclass(frozen=True)
class Change:
    """One thing that differs between plan A and plan B."""

    node: str
    aspect: str
    """oscillator, clock, setting, achieved, error, share or verdict (pass, at risk, fail)."""
    item: str
    """The setting's name or the rate's label; empty for a node's own frequency."""
    a: Value
    b: Value
    a_text: str
    b_text: str


def _frequency(value: Fraction | None) -> tuple[Value, str]:
    return (None, "-") if value is None else (exact_string(value), format_hz(value))


def _setting(value: SettingValue | None) -> tuple[Value, str]:
    return (None, "-") if value is None else (value, str(value))


def _node_order(a: Scenario, b: Scenario) -> list[str]:
    names = [*a.clock_names, *(p.name for p in a.peripherals)]
    names += [*b.clock_names, *(p.name for p in b.peripherals)]
    return list(dict.fromkeys(names))


def _rates(side: Side, node: str) -> dict[str, RateCheck]:
    checks = side.ranked.evaluation.checks
    return {c.requirement.label: c for c in checks if c.requirement.peripheral == node}


def _rate_figures(
    check: RateCheck | None,
) -> dict[str, tuple[Fraction | str | None, Value, str]]:
    """Per aspect: the exact value compared, its JSON value and its display text."""
    if check is None:
        return {aspect: (None, None, "-") for aspect in ("achieved", "error", "share", "verdict")}
    verdict = rate_verdict(check)
    return {
        "achieved": (
            check.achieved,
            exact_string(check.achieved),
            format_rate(check.achieved, check.requirement.unit),
        ),
        "error": (
            check.error,
            float(check.error * 10**6),
            format_relative(check.error, signed=True),
        ),
        "share": (check.share, float(check.share), format_share(check.share)),
        "verdict": (verdict, verdict, verdict),
    }


def plan_changes(a: Side, b: Side) -> tuple[Change, ...]:
    """Every difference between two plans, node by node in A's order, then B's extra nodes."""
    changes: list[Change] = []
    for node in _node_order(a.scenario, b.scenario):
        clocks = (a.ranked.evaluation.clocks.get(node), b.ranked.evaluation.clocks.get(node))
        if clocks[0] != clocks[1]:
            sourced = node in a.ranked.plan.sources or node in b.ranked.plan.sources
            (value_a, text_a), (value_b, text_b) = map(_frequency, clocks)
            aspect = "oscillator" if sourced else "clock"
            changes.append(Change(node, aspect, "", value_a, value_b, text_a, text_b))
        settings_a = node_settings(a.ranked.plan, node)
        settings_b = node_settings(b.ranked.plan, node)
        for name in dict.fromkeys([*settings_a, *settings_b]):
            if settings_a.get(name) != settings_b.get(name):
                (value_a, text_a), (value_b, text_b) = (
                    _setting(settings_a.get(name)),
                    _setting(settings_b.get(name)),
                )
                changes.append(Change(node, "setting", name, value_a, value_b, text_a, text_b))
        rates_a, rates_b = _rates(a, node), _rates(b, node)
        for label in dict.fromkeys([*rates_a, *rates_b]):
            figures_a = _rate_figures(rates_a.get(label))
            figures_b = _rate_figures(rates_b.get(label))
            for aspect, (exact_a, value_a, text_a) in figures_a.items():
                exact_b, value_b, text_b = figures_b[aspect]
                if exact_a != exact_b:
                    changes.append(Change(node, aspect, label, value_a, value_b, text_a, text_b))
    return tuple(changes)
