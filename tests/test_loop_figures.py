"""Every PLL's phase-detector (PFD) and VCO frequencies, in every output that shows a plan.

The relations checked are the textbook ones, f_PFD = f_ref / R and f_VCO = N · f_PFD with
N = whole + fraction / 2^bits for a fractional-N loop (from memory: the standard PLL
relations, written here independently of the evaluator).
"""

from __future__ import annotations

from fractions import Fraction

import pytest
from rich.console import Console

from clockplan.export import plan_to_data
from clockplan.graphs import plan_graph
from clockplan.report import report_text
from clockplan.solve import search
from clockplan.treeview import plan_tree


@pytest.fixture(scope="module")
def result(default_scenario):
    return search(default_scenario, top=1)


def test_the_evaluator_gives_each_pll_its_detector_and_vco(default_scenario, result):
    ranked = result.plans[0]
    settings, evaluation = ranked.plan.settings, ranked.evaluation
    for pll in default_scenario.plls:
        reference = evaluation.clocks[pll.input] / settings[f"{pll.name}.reference_divider"]
        steps = Fraction(settings.get(f"{pll.name}.fraction", 0), 2**pll.fraction_bits)
        assert evaluation.detectors[pll.name] == reference
        assert evaluation.clocks[pll.name] == reference * (
            settings[f"{pll.name}.multiplier"] + steps
        )
        assert pll.pfd[0] <= reference <= pll.pfd[1]


def test_json_tree_report_and_graph_show_pfd_and_vco(default_scenario, result):
    ranked = result.plans[0]
    (name,) = [pll.name for pll in default_scenario.plls]
    pfd, vco = ranked.evaluation.detectors[name], ranked.evaluation.clocks[name]
    data = plan_to_data(result, ranked)
    assert Fraction(data["plls"][name]["pfd_hz"]) == pfd
    assert Fraction(data["plls"][name]["vco_hz"]) == vco
    # The bundled board: a 4 MHz crystal, reference divider 1, ×60.
    words = "PFD 4 MHz, VCO 240 MHz"
    console = Console(width=120, color_system=None, record=True)
    console.print(plan_tree(default_scenario, ranked))
    assert words in console.export_text()
    assert words in report_text(result, ranked)
    graph = plan_graph(default_scenario, ranked)
    assert graph.nodes[name]["loop"] == words
    assert Fraction(graph.nodes[name]["pfd_hz"]) == pfd
