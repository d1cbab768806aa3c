"""The SVG picture: well-formed XML, every node and figure shown, an outline a page wide."""

from __future__ import annotations

import itertools
import xml.etree.ElementTree as ET
from pathlib import Path

import networkx as nx
import pytest

from clockplan.drawing import INDENT, PAGE_WIDTH, plan_svg
from clockplan.graphs import plan_graph
from clockplan.scenario import default_scenario_path, load_scenario
from tests.helpers import BOARDS, bench_ranked, sketch_ranked

SVG = "{http://www.w3.org/2000/svg}"
ROOT = Path(__file__).parent.parent
EVERY_BOARD = sorted((ROOT / "scenarios").rglob("*.toml")) + sorted(BOARDS.glob("*.toml"))


def _parse(text: str) -> ET.Element:
    root = ET.fromstring(text.encode("utf-8"))
    assert root.tag == f"{SVG}svg"
    return root


def _texts(root: ET.Element) -> list[str]:
    return [element.text or "" for element in root.iter(f"{SVG}text")]


def _boxes(root: ET.Element) -> dict[str, ET.Element]:
    """Each box's rectangle, by the name its group carries (a node, or an unchosen input)."""
    return {
        group.get("data-name"): group.find(f"{SVG}rect")
        for group in root.iter(f"{SVG}g")
        if group.get("data-name") is not None
    }


def _figures(graph: nx.DiGraph[str]) -> list[str]:
    """Every text the picture must show: names, frequencies, settings, loops, rate figures."""
    wanted = []
    for name, data in graph.nodes(data=True):
        wanted.append(name)
        if data["role"] == "peripheral":
            for index in range(1, data["rates"] + 1):
                wanted += [data[f"rate{index}_achieved"], data[f"rate{index}_limit"]]
                wanted.append(f"{data[f'rate{index}_share'] * 100:.2f} %")
        else:
            wanted += [data["frequency"], data["setting"], data.get("loop", "")]
    return [text for text in wanted if text]


def _assert_everything_shown(graph: nx.DiGraph[str], root: ET.Element) -> None:
    texts = _texts(root)
    for figure in _figures(graph):
        assert any(figure in text for text in texts), figure
    nodes = {name for name in _boxes(root) if " -> " not in name}
    assert nodes == set(graph.nodes)


@pytest.fixture(scope="module")
def default_graph(default_scenario, default_best):
    return plan_graph(default_scenario, default_best.plans[0])


def test_default_tree_parses_and_shows_every_node_and_figure(default_graph):
    root = _parse(plan_svg(default_graph))
    _assert_everything_shown(default_graph, root)
    texts = _texts(root)
    assert "120 MHz" in texts  # the core clock's frequency
    assert "PFD 4 MHz, VCO 240 MHz" in texts  # the PLL's loop inside its box


def test_title_with_markup_characters_is_escaped():
    scenario, ranked = bench_ranked()
    root = _parse(plan_svg(plan_graph(scenario, ranked)))
    assert root.find(f"{SVG}title").text == f"{scenario.title}: clock tree"


def test_outline_indents_each_child_under_its_parent():
    scenario, ranked = bench_ranked()
    boxes = _boxes(_parse(plan_svg(plan_graph(scenario, ranked))))
    x = {name: float(rect.get("x")) for name, rect in boxes.items()}
    y = {name: float(rect.get("y")) for name, rect in boxes.items()}
    chain = ["main", "audio_pll", "core", "sd_clock", "card"]
    assert [x[name] - x["main"] for name in chain] == [depth * INDENT for depth in range(5)]
    assert [y[name] for name in chain] == sorted(y[name] for name in chain)
    assert x["main"] == x["slow"] and y["slow"] > y["card"]  # each oscillator starts a tree
    assert x["usb"] == x["sd_clock"]  # both hang under usb_clock
    rows = sorted((y[name], float(boxes[name].get("height"))) for name in boxes)
    assert all(top + height < below for (top, height), (below, _) in itertools.pairwise(rows))


def test_unchosen_mux_input_is_a_dashed_box_and_verdicts_are_shown():
    scenario, ranked = bench_ranked()
    root = _parse(plan_svg(plan_graph(scenario, ranked)))
    dashed = [p for p in root.iter(f"{SVG}path") if p.get("stroke-dasharray")]
    assert len(dashed) == 1  # usb_clock -> sd_clock; core was chosen
    unchosen = _boxes(root)["usb_clock -> sd_clock"]
    assert unchosen.get("stroke-dasharray")
    texts = _texts(root)
    assert "sd_clock: input 0, not chosen" in texts
    assert "input core (1 of 0..1)" in texts
    assert any(text.endswith(", fail") for text in texts)
    assert any(text.endswith(", at risk") for text in texts)


@pytest.mark.parametrize(
    "path",
    [*EVERY_BOARD, default_scenario_path()],
    ids=lambda path: path.relative_to(path.parent.parent).as_posix(),
)
def test_every_board_fits_a_page_and_shows_everything(path):
    scenario = load_scenario(path)
    graph = plan_graph(scenario, sketch_ranked(scenario))
    root = _parse(plan_svg(graph))
    width = float(root.get("width"))
    assert width <= PAGE_WIDTH
    for rect in _boxes(root).values():
        assert float(rect.get("x")) + float(rect.get("width")) <= width
    _assert_everything_shown(graph, root)
