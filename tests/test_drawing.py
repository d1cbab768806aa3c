"""The SVG picture: well-formed XML, every node named, laid out left to right."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from clockplan.drawing import plan_svg
from clockplan.graphs import plan_graph
from tests.helpers import bench_ranked

SVG = "{http://www.w3.org/2000/svg}"


def _parse(text: str) -> ET.Element:
    root = ET.fromstring(text.encode("utf-8"))
    assert root.tag == f"{SVG}svg"
    return root


def _texts(root: ET.Element) -> list[str]:
    return [element.text or "" for element in root.iter(f"{SVG}text")]


def _boxes(root: ET.Element) -> dict[str, ET.Element]:
    """Each node's rectangle, by the node name its group carries."""
    return {
        group.get("data-name"): group.find(f"{SVG}rect")
        for group in root.iter(f"{SVG}g")
        if group.get("data-name") is not None
    }


@pytest.fixture(scope="module")
def default_graph(default_scenario, default_best):
    return plan_graph(default_scenario, default_best.plans[0])


def test_default_tree_parses_and_names_every_node(default_graph):
    root = _parse(plan_svg(default_graph))
    texts = _texts(root)
    for name in default_graph.nodes:
        assert any(text.startswith(name) for text in texts), name
    assert set(_boxes(root)) == set(default_graph.nodes)
    assert "120 MHz" in texts  # the core clock's frequency
    for _, _, label in default_graph.edges(data="label"):
        assert not label or label in texts  # every divider setting sits on its edge


def test_title_with_markup_characters_is_escaped():
    scenario, ranked = bench_ranked()
    root = _parse(plan_svg(plan_graph(scenario, ranked)))
    assert root.find(f"{SVG}title").text == f"{scenario.title}: clock tree"


def test_layout_runs_left_to_right_by_depth():
    scenario, ranked = bench_ranked()
    boxes = _boxes(_parse(plan_svg(plan_graph(scenario, ranked))))
    x = {name: float(rect.get("x")) for name, rect in boxes.items()}
    assert x["main"] < x["audio_pll"] < x["core"] < x["sd_clock"] < x["card"]
    assert x["usb"] == x["card"] == x["tick"]  # peripherals share the last column
    assert x["main"] == x["slow"]


def test_unchosen_mux_input_is_dashed_and_verdicts_are_shown():
    scenario, ranked = bench_ranked()
    root = _parse(plan_svg(plan_graph(scenario, ranked)))
    dashed = [p for p in root.iter(f"{SVG}path") if p.get("stroke-dasharray")]
    assert len(dashed) == 1  # usb_clock -> sd_clock; core was chosen
    texts = _texts(root)
    assert any(text.endswith(", fail") for text in texts)
    assert any(text.endswith(", at risk") for text in texts)
