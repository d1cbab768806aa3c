"""The clock tree as a networkx ``DiGraph``: edges run from a clock to what it feeds.

The scenario's dataclasses are the truth; the graph is a derived view for the outputs
that draw or export the tree (:mod:`clockplan.topology` answers the structural questions
without it).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import networkx as nx

from clockplan.text_safety import printable

if TYPE_CHECKING:
    from clockplan.scenario import Scenario

__all__ = ["clock_graph"]


def clock_graph(scenario: Scenario) -> nx.DiGraph[str]:
    """Every node of the scenario with a ``role`` attribute, and an edge per ``from``."""
    graph: nx.DiGraph[str] = nx.DiGraph(title=printable(scenario.title))
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
