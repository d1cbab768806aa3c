"""The plan graph: exact attributes, verdicts, and DOT/GraphML that read back unchanged."""

from __future__ import annotations

import io
import re
from fractions import Fraction

import networkx as nx
import pytest

from clockplan.evaluate import RateCheck
from clockplan.graphs import dot_text, graphml_text, plan_graph
from clockplan.peripherals.base import CeilingRate, Requirement, ToleranceRate
from clockplan.result import RankedPlan
from clockplan.scenario import Scenario
from clockplan.text import AT_RISK, FAIL, PASS, exact_decimal, rate_verdict
from tests.helpers import bench_ranked


@pytest.fixture(scope="module")
def default_ranked(default_scenario, default_best) -> tuple[Scenario, RankedPlan]:
    return default_scenario, default_best.plans[0]


@pytest.fixture(params=["bench", "default"])
def graph(request) -> nx.DiGraph:
    scenario, ranked = (
        bench_ranked() if request.param == "bench" else request.getfixturevalue("default_ranked")
    )
    return plan_graph(scenario, ranked)


def test_plan_graph_holds_exact_frequencies_and_settings():
    scenario, ranked = bench_ranked()
    graph = plan_graph(scenario, ranked)
    # 12 MHz / 1 × (16 + 3/8) = 196.5 MHz; ÷7 is not a whole number of hertz.
    assert graph.nodes["audio_pll"]["hz"] == "196500000"
    assert graph.nodes["audio_pll"]["fraction"] == 3
    assert graph.nodes["audio_pll"]["setting"] == "÷1 ×16 + 3/8"
    assert graph.nodes["core"]["hz"] == "196500000/7"
    assert graph.nodes["core"]["divide"] == 7
    assert graph.nodes["sd_clock"]["input"] == "core"
    assert graph.edges["core", "sd_clock"]["selected"] is True
    assert graph.edges["usb_clock", "sd_clock"]["selected"] is False
    assert graph.nodes["console"]["rate1_achieved_hz"] == exact_decimal(
        Fraction(196_500_000, 7) * 16 / 46784
    )
    assert graph.nodes["console"]["rate1_setting"] == "divisor_9600 = 182.75"
    assert graph.graph["rank"] == 1 and graph.graph["status"] == "optimal"


def test_plan_graph_marks_every_verdict():
    scenario, ranked = bench_ranked()
    graph = plan_graph(scenario, ranked)
    # usb at 49.125 MHz is 2.34 % off (fail); card at 28.0714 MHz uses 87 % (at risk).
    assert graph.nodes["usb"]["verdict"] == FAIL
    assert graph.nodes["card"]["verdict"] == AT_RISK
    assert graph.nodes["tick"]["verdict"] == PASS
    assert graph.graph["meets_every_allowance"] is False


def _check(error: Fraction, allowance: Fraction, *, ceiling: bool = False) -> RateCheck:
    requirement: Requirement
    if ceiling:
        requirement = CeilingRate(
            peripheral="p",
            label="rate",
            setting="p.divide",
            maximum=Fraction(1000),
            allowance_basis="test",
        )
    else:
        requirement = ToleranceRate(
            peripheral="p",
            label="rate",
            setting="p.divide",
            target=Fraction(1000),
            allowance=allowance,
            allowance_basis="test",
        )
    achieved = 1000 * (1 + error)
    return RateCheck(
        requirement, Fraction(1000), 1, achieved, "main", Fraction(0), 0.0, requirement.options[0]
    )


@pytest.mark.parametrize(
    ("error", "verdict"),
    [
        (Fraction(79, 100), PASS),
        (Fraction(80, 100), PASS),  # exactly 0.8 of the allowance is not yet at risk
        (Fraction(801, 1000), AT_RISK),
        (Fraction(1), AT_RISK),
        (Fraction(1001, 1000), FAIL),
        (Fraction(-2), FAIL),
    ],
)
def test_rate_verdict_thresholds(error, verdict):
    # allowance 1 (a whole band) keeps share == |error|
    assert rate_verdict(_check(error, Fraction(1))) == verdict


@pytest.mark.parametrize(
    ("error", "verdict"), [(Fraction(-1, 100), PASS), (Fraction(1, 100), FAIL)]
)
def test_a_maximum_rate_is_pass_or_fail_only(error, verdict):
    # 99 % of a ceiling is where the search puts it on purpose: not "at risk".
    assert rate_verdict(_check(error, Fraction(1), ceiling=True)) == verdict


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (Fraction(7), "7"),
        (Fraction(521, 16), "32.5625"),
        (Fraction(-1, 8), "-0.125"),
        (Fraction(3, 50), "0.06"),
        (Fraction(1, 3), "1/3"),
    ],
)
def test_exact_decimal(value, text):
    assert exact_decimal(value) == text
    assert Fraction(text) == value


def _as_text(value: object) -> str:
    return ("true" if value else "false") if isinstance(value, bool) else str(value)


_TOKEN = re.compile(r'\s*(?:("(?:[^"\\]|\\.)*")|(->|[\[\]=,;{}])|([A-Za-z_][A-Za-z0-9_]*))', re.S)


def _unquote(token: str) -> str:
    if not token.startswith('"'):
        return token
    return re.sub(r"\\(.)", lambda m: "\n" if m.group(1) == "n" else m.group(1), token[1:-1])


def read_dot(text: str) -> tuple[dict, dict, dict, dict]:
    """A small reader for the DOT subset we write: graph, node and edge statements."""
    tokens, position = [], 0
    while position < len(text.rstrip()):
        match = _TOKEN.match(text, position)
        assert match, f"unreadable DOT at {text[position : position + 40]!r}"
        tokens.append(match.group(0).strip())
        position = match.end()
    assert tokens[:3] == ["digraph", '"clockplan"', "{"] and tokens[-1] == "}"
    statements, current = [], []
    for token in tokens[3:-1]:
        if token == ";":
            statements.append(current)
            current = []
        else:
            current.append(token)
    assert not current, "every statement ends with ';'"
    graph_attributes, defaults, nodes, edges = {}, {}, {}, {}

    def attributes(part: list[str]) -> dict[str, str]:
        assert part[0] == "[" and part[-1] == "]"
        inner = [token for token in part[1:-1] if token != ","]
        assert len(inner) % 3 == 0 and all(token == "=" for token in inner[1::3])
        pairs = zip(inner[::3], inner[2::3], strict=True)
        return {_unquote(key): _unquote(value) for key, value in pairs}

    for statement in statements:
        if statement[0] in ("graph", "node", "edge"):
            found = attributes(statement[1:])
            if statement[0] == "graph":
                graph_attributes.update(found)
            else:
                defaults[statement[0]] = found
        elif len(statement) == 3 and statement[1] == "=":
            defaults[_unquote(statement[0])] = _unquote(statement[2])
        elif len(statement) > 1 and statement[1] == "->":
            edges[(_unquote(statement[0]), _unquote(statement[2]))] = attributes(statement[3:])
        else:
            nodes[_unquote(statement[0])] = attributes(statement[1:])
    return graph_attributes, defaults, nodes, edges


def test_dot_reads_back_to_the_same_graph(graph):
    graph_attributes, defaults, nodes, edges = read_dot(dot_text(graph))
    assert graph_attributes == {key: _as_text(value) for key, value in graph.graph.items()}
    assert defaults["rankdir"] == "LR"
    assert set(nodes) == set(graph.nodes)
    for name, data in graph.nodes(data=True):
        assert nodes[name] == {key: _as_text(value) for key, value in data.items()}
    assert set(edges) == set(graph.edges)
    for parent, child, data in graph.edges(data=True):
        assert edges[(parent, child)] == {key: _as_text(value) for key, value in data.items()}


def test_dot_quotes_every_id():
    scenario, ranked = bench_ranked()
    text = dot_text(plan_graph(scenario, ranked))
    assert '\\"quoted\\"' in text  # Source: DOT grammar, graphviz.org/doc/info/lang.html
    assert "\n" not in text.split('"label"=')[1].split("];")[0]  # line breaks are escaped
    for line in text.splitlines()[1:-1]:
        assert line.startswith(('  "', "  graph [", "  node [", "  edge [")), line


def test_graphml_reads_back_to_the_same_graph(graph):
    back = nx.read_graphml(io.BytesIO(graphml_text(graph).encode("utf-8")))
    assert isinstance(back, nx.DiGraph)
    graph_data = {k: v for k, v in back.graph.items() if k not in ("node_default", "edge_default")}
    assert graph_data == graph.graph
    assert set(back.nodes) == set(graph.nodes)
    assert set(back.edges) == set(graph.edges)
    for name, data in graph.nodes(data=True):
        assert back.nodes[name] == data
    for parent, child, data in graph.edges(data=True):
        assert back.edges[parent, child] == data
