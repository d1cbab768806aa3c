"""The chosen plan as a graph: the clock tree with frequencies, settings and verdicts.

:func:`plan_graph` extends :func:`clockplan.tree.clock_graph` with the plan's exact
frequencies (``"p/q"`` strings), display strings, every setting and, for peripherals,
every rate's figures. :func:`dot_text` and :func:`graphml_text` write it out; the
other views (terminal tree, picture, header, report) share the small helpers here so
they all say the same thing.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

import networkx as nx

from clockplan.evaluate import RateCheck
from clockplan.interfaces import Peripheral
from clockplan.plan import Plan, SettingValue, pll_keys
from clockplan.quantities import exact_string, format_hz, format_relative
from clockplan.render import format_rate
from clockplan.scenario import Scenario
from clockplan.solve import RankedPlan
from clockplan.text_safety import printable
from clockplan.tree import clock_graph

__all__ = [
    "AT_RISK_SHARE",
    "PASS",
    "AT_RISK",
    "FAIL",
    "rate_verdict",
    "worst_verdict",
    "exact_decimal",
    "node_settings",
    "setting_text",
    "rate_settings",
    "rate_setting_text",
    "register_value",
    "limit_text",
    "plan_graph",
    "dot_text",
    "graphml_text",
]

AT_RISK_SHARE = Fraction(4, 5)
"""A rate whose worst case uses more than this share of its allowance is marked "at risk".

Our own convention (no source): it passes, but with less than a fifth of the
allowance left it deserves a second look before the board is built.
"""
PASS, AT_RISK, FAIL = "pass", "at risk", "fail"


def rate_verdict(check: RateCheck) -> str:
    """``"pass"``, ``"at risk"`` (share above 0.8, our own convention) or ``"fail"``.

    A maximum rate (a ceiling) is only pass or fail: the search drives it close to its
    limit on purpose, budget included.
    """
    if not check.passes:
        return FAIL
    if check.requirement.ceiling:
        return PASS
    return AT_RISK if check.share > AT_RISK_SHARE else PASS


def worst_verdict(checks: list[RateCheck] | tuple[RateCheck, ...]) -> str:
    """The worst verdict among ``checks`` (``"pass"`` when there are none)."""
    verdicts = {rate_verdict(check) for check in checks}
    return next((verdict for verdict in (FAIL, AT_RISK) if verdict in verdicts), PASS)


def exact_decimal(value: Fraction | int) -> str:
    """An exact value as a whole number, a terminating decimal, or ``"p/q"``."""
    value = Fraction(value)
    if value.denominator == 1:
        return str(value.numerator)
    denominator, twos, fives = value.denominator, 0, 0
    while denominator % 2 == 0:
        denominator, twos = denominator // 2, twos + 1
    while denominator % 5 == 0:
        denominator, fives = denominator // 5, fives + 1
    if denominator != 1:
        return exact_string(value)
    places = max(twos, fives)
    scaled = abs(value) * 10**places
    whole, digits = divmod(int(scaled), 10**places)
    sign = "-" if value < 0 else ""
    return f"{sign}{whole}.{digits:0{places}d}"


def node_settings(plan: Plan, name: str) -> dict[str, SettingValue]:
    """The settings of one node, keyed by the part after ``name.`` (``"divide"``)."""
    prefix = f"{name}."
    return {
        key[len(prefix) :]: value for key, value in plan.settings.items() if key.startswith(prefix)
    }


def setting_text(scenario: Scenario, plan: Plan, name: str) -> str:
    """What a clock node is set to, in words: ``"÷2"``, ``"÷1 ×60 + 3/8"``, ``"input bus"``."""
    plls = {pll.name: pll for pll in scenario.plls}
    if name in plls:
        reference_key, multiplier_key, fraction_key = pll_keys(name)
        text = f"÷{plan.settings.get(reference_key)} ×{plan.settings.get(multiplier_key)}"
        fraction = plan.settings.get(fraction_key, 0)
        if plls[name].fraction_bits and fraction:
            text += f" + {fraction}/{2 ** plls[name].fraction_bits}"
        return text
    if any(divider.name == name for divider in scenario.dividers):
        return f"÷{plan.settings.get(f'{name}.divide')}"
    for mux in scenario.muxes:
        if mux.name == name:
            chosen = plan.settings.get(f"{name}.input")
            index = mux.inputs.index(str(chosen)) if chosen in mux.inputs else "?"
            return f"input {chosen} ({index} of 0..{len(mux.inputs) - 1})"
    return ""


def register_value(check: RateCheck) -> Fraction:
    """The rate's divisor as the peripheral holds it: the count ÷ its scale and option factor."""
    scale = check.requirement.divisor_scale * check.option.factor
    return Fraction(check.divisor, scale)


def rate_settings(check: RateCheck, plan: Plan) -> dict[str, SettingValue]:
    """The plan's settings behind one rate, by full key: its divisor (or stages) and option."""
    requirement = check.requirement
    keys = [requirement.stage_setting(name) for name, _ in requirement.stages]
    keys = keys or [requirement.setting]
    if len(requirement.choices) > 1:
        keys.append(requirement.option_setting)
    return {key: plan.settings[key] for key in keys if key in plan.settings}


def rate_setting_text(check: RateCheck, plan: Plan) -> str:
    """The settings behind one rate in words: ``"divisor_115200 = 32.5625"``, stages, option."""
    requirement = check.requirement
    parts = []
    for key, value in rate_settings(check, plan).items():
        if key == requirement.option_setting:
            continue
        shown = exact_decimal(register_value(check)) if key == requirement.setting else value
        parts.append(f"{key.split('.', 1)[-1]} = {shown}")
    if check.option.label:
        parts.append(check.option.label)
    return ", ".join(parts)


def limit_text(check: RateCheck) -> str:
    """What the rate must meet: its allowance, or ``"≤ 25 MHz"`` for a maximum."""
    requirement = check.requirement
    if not requirement.ceiling:
        return format_relative(check.allowance)
    top = format_rate(requirement.target, requirement.unit)
    if requirement.floor is None:
        return f"≤ {top}"
    return f"{format_rate(requirement.floor, requirement.unit)} .. {top}"


def plan_graph(scenario: Scenario, ranked: RankedPlan) -> nx.DiGraph:
    """The clock tree of ``ranked`` with frequencies, settings and rate figures as attributes.

    Graph: ``title``, ``file``, ``rank``, ``status``, ``worst_share``,
    ``meets_every_allowance``. Clock nodes: ``role``, ``hz`` (exact), ``frequency``
    (display), ``setting`` (display) and each setting under its own name. Peripherals:
    ``kind``, ``clock``, ``kernel_hz``, ``verdict``, ``rates`` and per rate ``rate<i>_…``.
    Edges: ``label``; a mux's input edges also ``input`` (index) and ``selected``.
    """
    plan, evaluation = ranked.plan, ranked.evaluation
    graph = clock_graph(scenario)
    graph.graph.update(
        file=printable(scenario.file),
        rank=ranked.rank,
        status=ranked.status.value,
        worst_share=float(evaluation.worst_share),
        meets_every_allowance=evaluation.feasible,
    )
    for name in scenario.clock_names:
        hz = evaluation.clocks[name]
        attributes: dict[str, Any] = {
            "hz": exact_string(hz),
            "frequency": format_hz(hz),
            "setting": setting_text(scenario, plan, name),
        }
        if name in plan.sources:
            source = scenario.source(name)
            attributes.update(kind=source.kind, budget_ppm=float(source.budget * 10**6))
        attributes.update(node_settings(plan, name))
        details = [attributes["frequency"], attributes["setting"] or attributes.get("kind", "")]
        attributes["label"] = "\n".join([name, *details])
        graph.nodes[name].update(attributes)
    for peripheral in scenario.peripherals:
        checks = [c for c in evaluation.checks if c.requirement.peripheral == peripheral.name]
        kernel = evaluation.clocks[peripheral.clock]
        graph.nodes[peripheral.name].update(
            _peripheral_attributes(peripheral, kernel, checks, plan)
        )
    for parent, child, data in graph.edges(data=True):
        data["label"] = graph.nodes[child].get("setting", "") if "hz" in graph.nodes[child] else ""
        if "input" in data:
            data["selected"] = plan.settings.get(f"{child}.input") == parent
            data["label"] = f"input {data['input']}" + (" (chosen)" if data["selected"] else "")
    return graph


def _peripheral_attributes(
    peripheral: Peripheral, kernel: Fraction, checks: list[RateCheck], plan: Plan
) -> dict[str, Any]:
    attributes: dict[str, Any] = {
        "kind": peripheral.kind,
        "clock": peripheral.clock,
        "kernel_hz": exact_string(kernel),
        "verdict": worst_verdict(checks),
        "rates": len(checks),
    }
    attributes.update(node_settings(plan, peripheral.name))
    lines = [peripheral.name]
    for index, check in enumerate(checks, start=1):
        requirement = check.requirement
        figures: dict[str, Any] = {
            "label": requirement.label,
            "unit": requirement.unit,
            "target_hz": exact_string(requirement.target),
            "achieved_hz": exact_string(check.achieved),
            "achieved": format_rate(check.achieved, requirement.unit),
            "setting": rate_setting_text(check, plan),
            "option": check.option.label,
            "ceiling": requirement.ceiling,
            "limit": limit_text(check),
            "error_ppm": float(check.error * 10**6),
            "worst_case_ppm": float(check.worst_case * 10**6),
            "worst_case_rss_ppm": check.worst_case_rss * 1e6,
            "margin_ppm": float(check.margin * 10**6),
            "share": float(check.share),
            "verdict": rate_verdict(check),
        }
        if not requirement.ceiling:
            figures["allowance_ppm"] = float(check.allowance * 10**6)
        attributes.update({f"rate{index}_{key}": value for key, value in figures.items()})
        lines.append(
            f"{requirement.label}: {figures['achieved']}, "
            f"{format_relative(check.error, signed=True)}, "
            f"{float(check.share) * 100:.2f} % of {figures['limit']} used, {figures['verdict']}"
        )
    attributes["label"] = "\n".join(lines)
    return attributes


def _dot_id(value: object) -> str:
    """A DOT double-quoted ID: backslash, quote and line breaks escaped (Graphviz escString)."""
    if isinstance(value, bool):
        value = "true" if value else "false"
    text = str(value).replace("\\", "\\\\").replace('"', '\\"')
    return '"' + text.replace("\r\n", "\\n").replace("\n", "\\n").replace("\r", "\\n") + '"'


def _dot_attributes(data: dict[str, Any]) -> str:
    return ", ".join(f"{_dot_id(key)}={_dot_id(value)}" for key, value in data.items())


def dot_text(graph: nx.DiGraph) -> str:
    """The graph in the DOT language, every ID quoted, left to right.

    Source: the DOT language grammar (graphviz.org/doc/info/lang.html): any
    double-quoted string is an ID, with ``\\"`` for a quote inside.
    """
    lines = ["digraph " + _dot_id("clockplan") + " {"]
    lines.append(f"  graph [{_dot_attributes(graph.graph)}];")
    lines.append('  "rankdir"="LR";')
    lines.append('  node ["shape"="box", "style"="rounded", "fontname"="sans-serif"];')
    lines.append('  edge ["fontname"="sans-serif", "fontsize"="10"];')
    for name, data in graph.nodes(data=True):
        lines.append(f"  {_dot_id(name)} [{_dot_attributes(data)}];")
    for parent, child, data in graph.edges(data=True):
        lines.append(f"  {_dot_id(parent)} -> {_dot_id(child)} [{_dot_attributes(data)}];")
    lines.append("}")
    return "\n".join(lines) + "\n"


def graphml_text(graph: nx.DiGraph) -> str:
    """The graph as GraphML (networkx's writer), readable by ``nx.read_graphml``."""
    return "\n".join(nx.generate_graphml(graph, prettyprint=True)) + "\n"
