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
from clockplan.peripherals import Peripheral
from clockplan.peripherals.base import CeilingRate
from clockplan.plan import Plan, node_settings
from clockplan.quantities import exact_string, format_hz, format_relative
from clockplan.result import RankedPlan
from clockplan.scenario import Scenario
from clockplan.text import (
    format_rate,
    format_share,
    limit_text,
    loop_text,
    rate_setting_text,
    rate_verdict,
    setting_text,
    worst_verdict,
)
from clockplan.text_safety import printable
from clockplan.tree import clock_graph

__all__ = [
    "plan_graph",
    "dot_text",
    "graphml_text",
]


def plan_graph(scenario: Scenario, ranked: RankedPlan) -> nx.DiGraph[str]:
    """The clock tree of ``ranked`` with frequencies, settings and rate figures as attributes.

    Graph: ``title``, ``file``, ``rank``, ``status``, ``worst_share``,
    ``meets_every_allowance``. Clock nodes: ``role``, ``hz`` (exact), ``frequency``
    (display), ``setting`` (display) and each setting under its own name. Peripherals:
    ``kind``, ``clock``, ``input_hz``, ``verdict``, ``rates`` and per rate ``rate<i>_…``.
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
        if name in evaluation.detectors:
            attributes.update(
                pfd_hz=exact_string(evaluation.detectors[name]),
                vco_hz=exact_string(hz),
                loop=loop_text(evaluation, name),
            )
        details = [attributes["frequency"], attributes["setting"] or attributes.get("kind", "")]
        details += [attributes["loop"]] if "loop" in attributes else []
        attributes["label"] = "\n".join([name, *details])
        graph.nodes[name].update(attributes)
    for peripheral in scenario.peripherals:
        checks = [c for c in evaluation.checks if c.requirement.peripheral == peripheral.name]
        input_clock = evaluation.clocks[peripheral.clock]
        graph.nodes[peripheral.name].update(
            _peripheral_attributes(peripheral, input_clock, checks, plan)
        )
    for parent, child, data in graph.edges(data=True):
        data["label"] = graph.nodes[child].get("setting", "") if "hz" in graph.nodes[child] else ""
        if "input" in data:
            data["selected"] = plan.mux_input(child) == parent
            data["label"] = f"input {data['input']}" + (" (chosen)" if data["selected"] else "")
    return graph


def _peripheral_attributes(
    peripheral: Peripheral, input_clock: Fraction, checks: list[RateCheck], plan: Plan
) -> dict[str, Any]:
    attributes: dict[str, Any] = {
        "kind": peripheral.kind,
        "clock": peripheral.clock,
        "input_hz": exact_string(input_clock),
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
            "target_hz": exact_string(requirement.nominal),
            "achieved_hz": exact_string(check.achieved),
            "achieved": format_rate(check.achieved, requirement.unit),
            "setting": rate_setting_text(check, plan),
            "option": check.option.label,
            "ceiling": isinstance(requirement, CeilingRate),
            "limit": limit_text(check),
            "error_ppm": float(check.error * 10**6),
            "worst_case_ppm": float(check.worst_case * 10**6),
            "worst_case_rss_ppm": check.worst_case_rss * 1e6,
            "margin_ppm": float(check.margin * 10**6),
            "share": float(check.share),
            "verdict": rate_verdict(check),
        }
        if check.allowance is not None:
            figures["allowance_ppm"] = float(check.allowance * 10**6)
        attributes.update({f"rate{index}_{key}": value for key, value in figures.items()})
        lines.append(
            f"{requirement.label}: {figures['achieved']}, "
            f"{format_relative(check.error, signed=True)}, "
            f"{format_share(check.share)} of {figures['limit']} used, {figures['verdict']}"
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


def dot_text(graph: nx.DiGraph[str]) -> str:
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


def graphml_text(graph: nx.DiGraph[str]) -> str:
    """The graph as GraphML (networkx's writer), readable by ``nx.read_graphml``."""
    return "\n".join(nx.generate_graphml(graph, prettyprint=True)) + "\n"
