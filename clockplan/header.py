"""A C header of one plan's settings, for the firmware build.

Every setting becomes ``#define PREFIX_<NODE>_<SETTING> value`` (``CLOCKPLAN_CORE_DIVIDE``);
a mux's choice is the input's index with the input's name in a comment; every
clock's frequency is a comment and, where it is a whole number of hertz, an
integer constant ``PREFIX_<NODE>_HZ``. Names come from the scenario's own node
names, made into C identifiers; two settings that would share a name are refused.
"""

from __future__ import annotations

import re
from fractions import Fraction

from clockplan import __version__
from clockplan.errors import ClockplanError
from clockplan.evaluate import RateCheck
from clockplan.plan import node_settings
from clockplan.quantities import exact_string, format_hz
from clockplan.result import RankedPlan
from clockplan.scenario import Mux, Scenario
from clockplan.text import (
    exact_decimal,
    format_rate,
    rate_settings,
    rate_verdict,
    register_value,
)
from clockplan.text_safety import printable

__all__ = ["DEFAULT_PREFIX", "c_identifier", "header_text"]

DEFAULT_PREFIX = "CLOCKPLAN"
UNSIGNED_LONG_MAX = 2**32 - 1
"""The largest value C guarantees an ``unsigned long`` holds (C99 §5.2.4.2.1, from memory)."""


def c_identifier(*parts: str) -> str:
    """Upper-case ``parts`` joined by ``_``, every other character made ``_``."""
    name = re.sub(r"[^A-Z0-9_]", "_", "_".join(parts).upper())
    return f"_{name}" if name[:1].isdigit() else name


_ASCII = str.maketrans({"≤": "<=", "÷": "/", "×": "x", "…": "...", "±": "+/-", "µ": "u"})


def _comment(text: str) -> str:
    """Text safe inside a C block comment: ASCII only, no comment start or end."""
    ascii_text = printable(text).translate(_ASCII).encode("ascii", "replace").decode("ascii")
    safe = " ".join(ascii_text.splitlines())
    while "*/" in safe or "/*" in safe:
        safe = safe.replace("*/", "* /").replace("/*", "/ *")
    return safe


def _integer_literal(value: int) -> str:
    """An unsigned literal: ``UL`` when it fits 32 bits, ``ULL`` beyond."""
    return f"{value}UL" if value <= UNSIGNED_LONG_MAX else f"{value}ULL"


def header_text(scenario: Scenario, ranked: RankedPlan, *, prefix: str = DEFAULT_PREFIX) -> str:
    """The header for ``ranked``: include guard, settings, frequencies, provenance comment."""
    plan, evaluation = ranked.plan, ranked.evaluation
    guard = c_identifier(prefix, "CLOCK_SETTINGS_H")
    lines = [
        f"/* Clock settings made by clockplan {__version__}; do not edit by hand. */",
        f"/* Scenario: {_comment(scenario.title)} */",
        f"/* From file {_comment(scenario.file)}, "
        f"plan rank {ranked.rank} ({ranked.status.value}). */",
        "/* Check the crystal's and the chip's datasheets (load capacitance, drive level, */",
        "/* start-up margin) and prototype before production. */",
        f"#ifndef {guard}",
        f"#define {guard}",
        "",
    ]
    defines: dict[str, str] = {}

    def define(name: str, value: str, comment: str, key: str) -> None:
        if name in defines:
            raise ClockplanError(
                f"C header: {defines[name]!r} and {key!r} both become {name}; "
                "rename one of the nodes in the scenario"
            )
        defines[name] = key
        lines.append(f"#define {name} {value}" + (f" /* {_comment(comment)} */" if comment else ""))

    for name in scenario.clock_names:
        clock = scenario.node(name)
        hz = evaluation.clocks[name]
        lines.append(f"/* {_comment(name)}: {_comment(_frequency_comment(hz))} */")
        for setting, value in node_settings(plan, name).items():
            key = f"{name}.{setting}"
            if isinstance(clock, Mux):
                index = clock.inputs.index(str(value))
                inputs = ", ".join(f"{i} {n}" for i, n in enumerate(clock.inputs))
                define(c_identifier(prefix, key), str(index), f"{value} (inputs: {inputs})", key)
            else:
                define(c_identifier(prefix, key), str(value), "", key)
        if hz.denominator == 1:
            define(c_identifier(prefix, name, "HZ"), _integer_literal(hz.numerator), "", name)
        lines.append("")
    for check in evaluation.checks:
        requirement = check.requirement
        lines.append(f"/* {_comment(requirement.peripheral)} {_comment(_rate_comment(check))} */")
        for key, value in rate_settings(check, plan).items():
            scale = check.option.factor
            if key == requirement.option_setting:
                define(c_identifier(prefix, key), str(value), check.option.label, key)
            elif key == requirement.setting and scale != 1:
                held = exact_decimal(register_value(check))
                scale_name = c_identifier(prefix, key, "SCALE")
                define(c_identifier(prefix, key), str(value), f"{held} after / {scale_name}", key)
                define(scale_name, str(scale), "", key)
            else:
                define(c_identifier(prefix, key), str(value), "", key)
        for name, value in check.option.settings:
            key = f"{requirement.setting}.{name}"
            define(c_identifier(prefix, key), str(value), "fixed by the chosen option", key)
        lines.append("")
    lines.append(f"#endif /* {guard} */")
    return "\n".join(lines) + "\n"


def _rate_comment(check: RateCheck) -> str:
    requirement = check.requirement
    unit = {"baud": "Bd", "bit/s": "bit/s"}.get(requirement.unit, "Hz")
    achieved = (
        f"{format_rate(check.achieved, requirement.unit)} ({exact_string(check.achieved)} {unit})"
    )
    standing = check.standing_text(brief=True)
    return f"{requirement.label}: {achieved}, {standing}, {rate_verdict(check)}"


def _frequency_comment(hz: Fraction) -> str:
    if hz.denominator == 1:
        return f"{format_hz(hz)} ({hz.numerator} Hz)"
    return f"{format_hz(hz)} ({exact_string(hz)} Hz, not a whole number of hertz)"
