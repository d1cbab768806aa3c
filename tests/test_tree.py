import networkx as nx
import pytest

from clockplan.errors import ScenarioError
from clockplan.topology import evaluation_order
from clockplan.tree import clock_graph
from tests.helpers import scenario_from

SOURCES = """
[sources.main]
kind = "crystal"
choose = ["8 MHz"]
"""


def test_graph_has_every_node_and_edge(default_scenario):
    graph = clock_graph(default_scenario)
    assert graph.nodes["system"]["role"] == "pll"
    assert ("usb_clock", "usb") in graph.edges
    assert nx.is_directed_acyclic_graph(graph)
    order = evaluation_order(default_scenario)
    assert order.index("system") < order.index("core") < order.index("bus")


def test_loop_is_named():
    text = (
        SOURCES
        + """
[dividers.a]
from = "b"
divide = 2
[dividers.b]
from = "a"
divide = 2
"""
    )
    with pytest.raises(ScenarioError, match="loop: a -> b -> a|loop: b -> a -> b"):
        scenario_from(text)


def test_mux_with_one_input_is_refused():
    text = SOURCES + '[muxes.pick]\nfrom = ["main"]\n'
    with pytest.raises(ScenarioError, match="at least two inputs") as caught:
        scenario_from(text)
    assert caught.value.key == "muxes.pick.from"


def test_peripheral_fed_by_a_peripheral_is_refused():
    text = (
        SOURCES
        + """
[peripherals.usb]
kind = "usb-full-speed"
from = "main"
[peripherals.other]
kind = "usb-full-speed"
from = "usb"
"""
    )
    with pytest.raises(ScenarioError, match="is a peripheral, not a clock"):
        scenario_from(text)


def test_unknown_from_is_named():
    text = SOURCES + '[dividers.a]\nfrom = "mian"\ndivide = 2\n'
    with pytest.raises(ScenarioError, match="did you mean 'main'") as caught:
        scenario_from(text)
    assert caught.value.key == "dividers.a.from"
