"""The clock tree as a networkx ``DiGraph``: edges run from a clock to what it feeds.

The scenario's dataclasses are the truth; the graph is a derived view used for
structural checks, evaluation order and drawing.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import networkx as nx

from clockplan._fields import hint
from clockplan.errors import ScenarioError
from clockplan.text_safety import printable

if TYPE_CHECKING:
    from clockplan.scenario import Scenario

__all__ = ["clock_graph", "check_structure", "evaluation_order", "feeding_source_names"]


def clock_graph(scenario: Scenario) -> nx.DiGraph:
    """Every node of the scenario with a ``role`` attribute, and an edge per ``from``."""
    graph = nx.DiGraph(title=printable(scenario.title))
    for source in scenario.sources:
        graph.add_node(source.name, role="source")
    for pll in scenario.plls:
        graph.add_node(pll.name, role="pll")
        graph.add_edge(pll.input, pll.name)
    for divider in scenario.dividers:
        graph.add_node(divider.name, role="divider")
        graph.add_edge(divider.input, divider.name)
    for mux in scenario.muxes:
        graph.add_node(mux.name, role="mux")
        for index, name in enumerate(mux.inputs):
            graph.add_edge(name, mux.name, input=index)
    for peripheral in scenario.peripherals:
        graph.add_node(peripheral.name, role="peripheral")
        graph.add_edge(peripheral.clock, peripheral.name)
    return graph


def check_structure(scenario: Scenario) -> None:
    """Refuse unknown ``from`` names, muxes with one input and loops."""
    clocks = scenario.clock_names
    feeds = [(f"plls.{pll.name}.from", pll.input) for pll in scenario.plls]
    feeds += [(f"dividers.{d.name}.from", d.input) for d in scenario.dividers]
    feeds += [(f"peripherals.{p.name}.from", p.clock) for p in scenario.peripherals]
    for mux in scenario.muxes:
        if len(mux.inputs) < 2:
            raise ScenarioError(
                scenario.file,
                f"muxes.{mux.name}.from",
                "a mux needs at least two inputs; with one, use a divider or feed directly",
            )
        feeds += [(f"muxes.{mux.name}.from", name) for name in mux.inputs]
    peripheral_names = {p.name for p in scenario.peripherals}
    for key, name in feeds:
        if name in peripheral_names:
            raise ScenarioError(scenario.file, key, f"{name!r} is a peripheral, not a clock")
        if name not in clocks:
            raise ScenarioError(
                scenario.file, key, f"{name!r} is not a clock of this scenario{hint(name, clocks)}"
            )
    graph = clock_graph(scenario)
    try:
        loop = nx.find_cycle(graph)
    except nx.NetworkXNoCycle:
        return
    names = [edge[0] for edge in loop] + [loop[0][0]]
    raise ScenarioError(
        scenario.file,
        _section_of(scenario, names[0]) + ".from",
        "the clocks form a loop: " + " -> ".join(names),
    )


def _section_of(scenario: Scenario, name: str) -> str:
    for section, items in (
        ("plls", scenario.plls),
        ("dividers", scenario.dividers),
        ("muxes", scenario.muxes),
    ):
        if any(item.name == name for item in items):
            return f"{section}.{name}"
    return name


def evaluation_order(scenario: Scenario) -> list[str]:
    """Clock nodes in an order where every node comes after what feeds it (file order on ties)."""
    graph = clock_graph(scenario)
    position = {name: index for index, name in enumerate(scenario.clock_names)}
    clocks = graph.subgraph(scenario.clock_names)
    return list(nx.lexicographical_topological_sort(clocks, key=lambda name: position[name]))


def feeding_source_names(scenario: Scenario, node: str) -> list[str]:
    """The sources a node can be fed from (more than one only through a mux)."""
    graph = clock_graph(scenario)
    sources = {source.name for source in scenario.sources}
    ancestors = nx.ancestors(graph, node) | {node}
    return [name for name in scenario.clock_names if name in sources and name in ancestors]
