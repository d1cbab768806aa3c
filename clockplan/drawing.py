"""An SVG picture of a plan graph, written by hand so it needs nothing but a browser.

Layout, left to right: clocks sit in columns by topological generation (an
oscillator, then what it feeds …), peripherals in one last column. Within the
picture each node hangs under one parent (a mux under the input it chose), leaves
take successive rows and a parent sits level with the middle of its children.
Edges carry the divider settings; nodes carry names, frequencies and rate verdicts.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any
from xml.sax.saxutils import escape, quoteattr

import networkx as nx

from clockplan.text import AT_RISK, FAIL

__all__ = ["plan_svg"]

FONT_SIZE = 12
"""Text size in pixels."""
CHARACTER_WIDTH = 7.4
"""Generous average width of one character at FONT_SIZE (sans-serif), for box sizes."""
LINE_HEIGHT = 16
PADDING = 8
ROW_GAP = 18
MARGIN = 24
TITLE_HEIGHT = 52

_FILL = {
    "source": ("#fdf3dc", "#9a6b12"),
    "pll": ("#e4eefb", "#2f5d99"),
    "divider": ("#e9f4ea", "#3f7a43"),
    "mux": ("#f1e9fa", "#6b4597"),
    "peripheral": ("#ffffff", "#555555"),
}
"""Fill and outline by role (our own palette)."""
_VERDICT_COLOUR = {FAIL: "#b3261e", AT_RISK: "#a05a00"}
_PASS_COLOUR = "#2e6b30"


@dataclass(frozen=True)
class _Box:
    """A node's place and text in the picture."""

    name: str
    x: float
    y: float
    width: float
    height: float
    lines: tuple[tuple[str, str, bool], ...]
    """(text, colour, bold) per line."""


def _text_width(text: str) -> float:
    return len(text) * CHARACTER_WIDTH


def _node_lines(name: str, data: dict[str, Any]) -> tuple[tuple[str, str, bool], ...]:
    if data["role"] == "peripheral":
        lines = [(f"{name}  ({data['kind']})", "#222222", True)]
        for index in range(1, data["rates"] + 1):
            verdict = data[f"rate{index}_verdict"]
            colour = _VERDICT_COLOUR.get(verdict, _PASS_COLOUR)
            share = data[f"rate{index}_share"] * 100
            lines.append(
                (
                    f"{data[f'rate{index}_label']}: {data[f'rate{index}_achieved']}, "
                    f"{share:.2f} % of {data[f'rate{index}_limit']} used, {verdict}",
                    colour,
                    False,
                )
            )
        return tuple(lines)
    detail = data.get("kind", "") if data["role"] == "source" else data["setting"]
    lines = [(name, "#222222", True), (data["frequency"], "#222222", False)]
    if detail:
        lines.append((detail, "#555555", False))
    if "loop" in data:
        lines.append((data["loop"], "#555555", False))
    return tuple(lines)


def _columns(graph: nx.DiGraph[str]) -> dict[str, int]:
    """Column of each node: clocks by generation, peripherals all in the last column."""
    clocks = [name for name, data in graph.nodes(data=True) if data["role"] != "peripheral"]
    column: dict[str, int] = {}
    for index, generation in enumerate(nx.topological_generations(graph.subgraph(clocks))):
        column.update({name: index for name in generation})
    last = max(column.values(), default=-1) + 1
    column.update({name: last for name in graph.nodes if name not in column})
    return column


def _parent(graph: nx.DiGraph[str], name: str) -> str | None:
    """The one input a node hangs under in the picture: a mux's chosen input, else the first."""
    inputs: list[str] = list(graph.predecessors(name))
    chosen = [p for p in inputs if graph.edges[p, name].get("selected")]
    return (chosen or inputs)[0] if inputs else None


def _rows(graph: nx.DiGraph[str]) -> dict[str, float]:
    """Row of each node: leaves in order, parents level with the middle of their children."""
    order = {name: index for index, name in enumerate(graph.nodes)}
    children: dict[str, list[str]] = {name: [] for name in graph.nodes}
    roots = []
    for name in graph.nodes:
        parent = _parent(graph, name)
        if parent is None:
            roots.append(name)
        else:
            children[parent].append(name)
    rows: dict[str, float] = {}
    next_row = 0

    def place(name: str) -> float:
        nonlocal next_row
        kids = sorted(children[name], key=order.__getitem__)
        if not kids:
            rows[name], next_row = next_row, next_row + 1
        else:
            placed = [place(kid) for kid in kids]
            rows[name] = (placed[0] + placed[-1]) / 2
        return rows[name]

    for root in roots:
        place(root)
    return rows


def _layout(graph: nx.DiGraph[str]) -> tuple[dict[str, _Box], float, float, float]:
    columns, rows = _columns(graph), _rows(graph)
    lines = {name: _node_lines(name, data) for name, data in graph.nodes(data=True)}
    widths = {
        name: max(_text_width(text) for text, _, _ in node_lines) + 2 * PADDING
        for name, node_lines in lines.items()
    }
    heights = {
        name: len(node_lines) * LINE_HEIGHT + 2 * PADDING for name, node_lines in lines.items()
    }
    pitch = max(heights.values()) + ROW_GAP
    count = max(columns.values()) + 1
    column_width = [
        max(widths[name] for name in graph.nodes if columns[name] == column)
        for column in range(count)
    ]
    labels = [_text_width(data["label"]) for _, _, data in graph.edges(data=True)]
    gap = max([90.0, *(width + 40 for width in labels)])
    left = [MARGIN + sum(column_width[:column]) + gap * column for column in range(count)]
    boxes = {
        name: _Box(
            name,
            left[columns[name]],
            TITLE_HEIGHT + MARGIN + rows[name] * pitch + (pitch - ROW_GAP - heights[name]) / 2,
            widths[name],
            heights[name],
            lines[name],
        )
        for name in graph.nodes
    }
    width = left[-1] + column_width[-1] + MARGIN
    height = TITLE_HEIGHT + MARGIN + (max(rows.values()) + 1) * pitch + MARGIN
    return boxes, width, height, gap


def _box_svg(box: _Box, role: str, verdict: str | None) -> list[str]:
    fill, outline = _FILL[role]
    if verdict is not None:
        outline = _VERDICT_COLOUR.get(verdict, _PASS_COLOUR)
    radius = 10 if role in ("source", "peripheral") else 3
    parts = [
        f'<g class="node {role}" data-name={quoteattr(box.name)}>',
        f'<rect x="{box.x:.1f}" y="{box.y:.1f}" width="{box.width:.1f}" height="{box.height:.1f}" '
        f'rx="{radius}" fill="{fill}" stroke="{outline}" stroke-width="1.5"/>',
    ]
    for index, (text, colour, bold) in enumerate(box.lines):
        y = box.y + PADDING + (index + 1) * LINE_HEIGHT - 4
        weight = ' font-weight="bold"' if bold else ""
        parts.append(
            f'<text x="{box.x + PADDING:.1f}" y="{y:.1f}" fill="{colour}"{weight}>'
            f"{escape(text)}</text>"
        )
    parts.append("</g>")
    return parts


def _edge_svg(start: _Box, end: _Box, label: str, dashed: bool, gap: float) -> list[str]:
    """A line from ``start`` to ``end``: straight across columns, curving in the last gap."""
    x1, y1 = start.x + start.width, start.y + start.height / 2
    x2, y2 = end.x - 2, end.y + end.height / 2
    bend = max(x1, end.x - gap)
    middle = (bend + x2) / 2
    dash = ' stroke-dasharray="5 4"' if dashed else ""
    colour = "#9a9a9a" if dashed else "#444444"
    parts = [
        f'<path d="M{x1:.1f},{y1:.1f} H{bend:.1f} C{middle:.1f},{y1:.1f} {middle:.1f},{y2:.1f} '
        f'{x2:.1f},{y2:.1f}" fill="none" stroke="{colour}" stroke-width="1.3"{dash} '
        'marker-end="url(#arrow)"/>'
    ]
    if label:
        parts.append(
            f'<text x="{middle:.1f}" y="{(y1 + y2) / 2 - 5:.1f}" text-anchor="middle" '
            f'fill="{colour}" stroke="#ffffff" stroke-width="4" paint-order="stroke">'
            f"{escape(label)}</text>"
        )
    return parts


def plan_svg(graph: nx.DiGraph[str]) -> str:
    """The plan graph (from :func:`clockplan.graphs.plan_graph`) as a standalone SVG document."""
    boxes, width, height, gap = _layout(graph)
    share = graph.graph["worst_share"] * 100
    subtitle = (
        f"plan {graph.graph['rank']} ({graph.graph['status']}), worst share {share:.2f} % "
        "of an allowance"
    )
    if any(data.get("selected") is False for _, _, data in graph.edges(data=True)):
        subtitle += "; dashed: a mux input not chosen"
    title = f"{graph.graph['title']}: clock tree"
    parts = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width:.0f}" height="{height:.0f}" '
        f'viewBox="0 0 {width:.0f} {height:.0f}" font-family="sans-serif" '
        f'font-size="{FONT_SIZE}" role="img">',
        f"<title>{escape(title)}</title>",
        "<defs>",
        '<marker id="arrow" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="7" '
        'markerHeight="7" orient="auto"><path d="M0,0 L10,5 L0,10 z" fill="#444444"/></marker>',
        "</defs>",
        f'<rect width="{width:.0f}" height="{height:.0f}" fill="#ffffff"/>',
        f'<text x="{MARGIN}" y="{MARGIN + 6}" font-size="16" font-weight="bold">'
        f"{escape(title)}</text>",
        f'<text x="{MARGIN}" y="{MARGIN + 26}" fill="#555555">{escape(subtitle)}</text>',
    ]
    for parent, child, data in graph.edges(data=True):
        dashed = data.get("selected") is False
        parts += _edge_svg(boxes[parent], boxes[child], data.get("label", ""), dashed, gap)
    for name, data in graph.nodes(data=True):
        verdict = data.get("verdict") if data["role"] == "peripheral" else None
        parts += _box_svg(boxes[name], data["role"], verdict)
    parts.append("</svg>")
    return "\n".join(parts) + "\n"
