"""A register-ready C header of one plan's settings, for the firmware build.

Every register field becomes ``#define PREFIX_<NODE>_<SETTING> field``: the value the
register holds, encoded as the scenario's ``register`` table says (the plain value then
in a comment). A peripheral's divisor is written as the peripheral holds it, never
multiplied by an oversampling: a fractional divisor as its whole part and fraction
(``..._WHOLE``, ``..._FRACTION``), a bit timing as prescaler and segments, a timer as its
stages; a mux's choice is the input's index. Every clock gets ``PREFIX_<NODE>_HZ``, or
``..._HZ_NUMERATOR`` and ``..._HZ_DENOMINATOR`` when it is not a whole number of hertz.
Names come from the scenario's own node names, made into C identifiers; two settings that
would share a name are refused.
"""

from __future__ import annotations

import re
from dataclasses import replace
from fractions import Fraction

from clockplan import __version__
from clockplan.errors import ClockplanError, ScenarioError
from clockplan.evaluate import RateCheck
from clockplan.plan import Plan, node_settings
from clockplan.quantities import exact_string, format_hz
from clockplan.registers import PLAIN, HeldField, UnencodableError, held_fields
from clockplan.result import RankedPlan
from clockplan.scenario import Divider, Mux, Node, Pll, Scenario
from clockplan.text import (
    exact_decimal,
    format_rate,
    rate_settings,
    rate_verdict,
    register_value,
)
from clockplan.text_safety import printable

__all__ = ["DEFAULT_PREFIX", "c_identifier", "file_name", "header_text"]

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
    """The header for ``ranked``: include guard, register fields, frequencies, provenance.

    It names the scenario by its file name only, so one plan gives the same bytes on every
    machine.
    """
    plan, evaluation = ranked.plan, ranked.evaluation
    guard = c_identifier(prefix, "CLOCK_SETTINGS_H")
    lines = [
        f"/* Clock settings made by clockplan {__version__}; do not edit by hand. */",
        f"/* Scenario: {_comment(scenario.title)} */",
        f"/* From file {_comment(file_name(scenario.file))}, "
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

    def field(node: str, held: HeldField) -> None:
        encoding = scenario.registers.get(node, {}).get(held.name, PLAIN)
        try:
            encoded = encoding.encode(held.value)
        except UnencodableError as error:
            key = f"{_section(scenario, node)}.{node}.register.{held.name}"
            raise ScenarioError(scenario.file, key, f"{error} (plan rank {ranked.rank})") from None
        comment = "; ".join(part for part in (encoding.describe(held.value), held.note) if part)
        define(c_identifier(prefix, held.key), str(encoded), comment, held.key)

    for name in scenario.clock_names:
        hz = evaluation.clocks[name]
        lines.append(f"/* {_comment(name)}: {_comment(_frequency_comment(hz))} */")
        for held in _node_fields(scenario.node(name), plan):
            field(name, held)
        if hz.denominator == 1:
            define(c_identifier(prefix, name, "HZ"), _integer_literal(hz.numerator), "", name)
        else:
            for part, value in (("NUMERATOR", hz.numerator), ("DENOMINATOR", hz.denominator)):
                define(c_identifier(prefix, name, "HZ", part), _integer_literal(value), "", name)
        lines.append("")
    for check in evaluation.checks:
        requirement = check.requirement
        lines.append(f"/* {_comment(requirement.peripheral)} {_comment(_rate_comment(check))} */")
        settings = rate_settings(check, plan)
        divisor = register_value(check)
        shown = exact_decimal(divisor)
        for held in held_fields(requirement, check.option, settings, divisor, shown):
            field(requirement.peripheral, held)
        lines.append("")
    lines.append(f"#endif /* {guard} */")
    return "\n".join(lines) + "\n"


def file_name(path: str) -> str:
    """The last part of a path written with either separator: no machine's folders."""
    return re.split(r"[\\/]", path)[-1]


def _section(scenario: Scenario, name: str) -> str:
    """The scenario section a clock or peripheral is written in, for a located error."""
    node = scenario.node(name)
    sections = {Pll: "plls", Divider: "dividers", Mux: "muxes"}
    return next((key for kind, key in sections.items() if isinstance(node, kind)), "peripherals")


def _node_fields(node: Node, plan: Plan) -> list[HeldField]:
    """A clock node's settings as register fields: a mux's choice as its input's index."""
    settings = node_settings(plan, node.name)
    if isinstance(node, Mux):
        inputs = ", ".join(f"{i} {n}" for i, n in enumerate(node.inputs))
        return [
            HeldField(
                f"{node.name}.{key}",
                key,
                node.inputs.index(str(chosen)),
                f"{chosen} (inputs: {inputs})",
            )
            for key, chosen in settings.items()
        ]
    fields = [HeldField(f"{node.name}.{key}", key, int(value)) for key, value in settings.items()]
    if isinstance(node, Pll) and node.fraction_bits:
        steps = 2**node.fraction_bits
        fields = [
            replace(held, note=f"{held.value}/{steps}") if held.name == "fraction" else held
            for held in fields
        ]
    return fields


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
