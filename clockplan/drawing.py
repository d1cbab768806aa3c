"""An SVG picture of a plan graph, written by hand so it needs nothing but a browser.

Layout, top down like an outline, so the picture stays as narrow as a page however long
the chains are: each node is a box on a row of its own, indented by its depth under the
oscillator that feeds it; a line runs down from each parent and branches right into each
child. Within the picture each node hangs under one parent (a mux under the input it
chose); under its other inputs a dashed box says the mux did not choose them. Every box
carries the node's name, frequency and setting (a PLL's PFD and VCO too), every peripheral
its rates and verdicts, so the lines need no labels.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any
from xml.sax.saxutils import escape, quoteattr

import networkx as nx

from clockplan.text import AT_RISK, FAIL

__all__ = ["plan_svg", "PAGE_WIDTH"]

PAGE_WIDTH = 1000
"""The width, in pixels, that the picture of every board we ship stays within."""
FONT_SIZE = 12
"""Text size in pixels."""
CHARACTER_WIDTH = 7.4
"""Generous average width of one character at FONT_SIZE (sans-serif), for box sizes."""
TITLE_CHARACTER_WIDTH = 10.0
"""The same for the 16-pixel bold title."""
LINE_HEIGHT = 16
PADDING = 8
SPAN_GAP = 10
"""Space between two pieces of text on one line of a box."""
ROW_GAP = 12
INDENT = 40
"""How far a child's box sits right of its parent's."""
STEM = 18
"""Where, from a box's left edge, the line to its children leaves it."""
MARGIN = 24
TITLE_HEIGHT = 52

_FILL = {
    "source": ("#fdf3dc", "#9a6b12"),
    "pll": ("#e4eefb", "#2f5d99"),
    "divider": ("#e9f4ea", "#3f7a43"),
    "mux": ("#f1e9fa", "#6b4597"),
    "peripheral": ("#ffffff", "#555555"),
    "unchosen": ("#ffffff", "#9a9a9a"),
}
"""Fill and outline by role (our own palette)."""
_VERDICT_COLOUR = {FAIL: "#b3261e", AT_RISK: "#a05a00"}
_PASS_COLOUR = "#2e6b30"
_INK, _GREY, _FAINT, _FREQUENCY = "#222222", "#555555", "#9a9a9a", "#1d5a85"


@dataclass(frozen=True)
class _Span:
    """A piece of text on one line of a box."""

    text: str
    colour: str
    bold: bool = False


@dataclass(frozen=True)
class _Row:
    """One box of the outline: a node, or a mux input the mux did not choose."""

    key: str
    """The node's name; for an unchosen input, ``"<input> -> <mux>"``."""
    role: str
    depth: int
    parent: str | None
    """The key of the row it hangs under."""
    lines: tuple[tuple[_Span, ...], ...]
    outline: str | None = None
    """A verdict's colour for the box's outline, else the role's."""


@dataclass(frozen=True)
class _Box:
    """A row's place in the picture."""

    row: _Row
    x: float
    y: float
    width: float
    height: float


def _text_width(text: str, character_width: float = CHARACTER_WIDTH) -> float:
    return len(text) * character_width


def _line_width(line: tuple[_Span, ...]) -> float:
    return sum(_text_width(span.text) for span in line) + SPAN_GAP * (len(line) - 1)


def _clock_lines(name: str, data: dict[str, Any]) -> tuple[tuple[_Span, ...], ...]:
    """A clock's name and frequency, then its setting (an oscillator's kind), then its loop."""
    lines: list[tuple[_Span, ...]] = [
        (_Span(name, _INK, bold=True), _Span(data["frequency"], _FREQUENCY))
    ]
    detail = data.get("kind", "") if data["role"] == "source" else data["setting"]
    lines += [(_Span(text, _GREY),) for text in (detail, data.get("loop", "")) if text]
    return tuple(lines)


def _peripheral_lines(name: str, data: dict[str, Any]) -> tuple[tuple[_Span, ...], ...]:
    """A peripheral's name and kind, then one line per rate with its figures and verdict."""
    lines: list[tuple[_Span, ...]] = [
        (_Span(name, _INK, bold=True), _Span(f"({data['kind']})", _GREY))
    ]
    for index in range(1, data["rates"] + 1):
        verdict = data[f"rate{index}_verdict"]
        share = data[f"rate{index}_share"] * 100
        text = (
            f"{data[f'rate{index}_label']}: {data[f'rate{index}_achieved']}, "
            f"{share:.2f} % of {data[f'rate{index}_limit']} used, {verdict}"
        )
        lines.append((_Span(text, _VERDICT_COLOUR.get(verdict, _PASS_COLOUR)),))
    return tuple(lines)


def _parent(graph: nx.DiGraph[str], name: str) -> str | None:
    """The one input a node hangs under in the picture: a mux's chosen input, else the first."""
    inputs: list[str] = list(graph.predecessors(name))
    chosen = [p for p in inputs if graph.edges[p, name].get("selected")]
    return (chosen or inputs)[0] if inputs else None


def _rows(graph: nx.DiGraph[str]) -> list[_Row]:
    """Every node once, depth first from each oscillator in the file's order, children in
    order; an input a mux did not choose gets a dashed row naming the mux."""
    order = {name: index for index, name in enumerate(graph.nodes)}
    parents = {name: _parent(graph, name) for name in graph.nodes}

    def walk(name: str, depth: int, parent: str | None) -> Iterator[_Row]:
        data = graph.nodes[name]
        if data["role"] == "peripheral":
            verdict = data.get("verdict")
            outline = _VERDICT_COLOUR.get(verdict, _PASS_COLOUR) if verdict else None
            yield _Row(name, "peripheral", depth, parent, _peripheral_lines(name, data), outline)
            return
        yield _Row(name, data["role"], depth, parent, _clock_lines(name, data))
        for child in sorted(graph.successors(name), key=order.__getitem__):
            if parents[child] == name:
                yield from walk(child, depth + 1, name)
            else:
                label = graph.edges[name, child].get("label", "")
                text = f"{child}: {label}, not chosen" if label else f"{child}: not chosen"
                line = (_Span(text, _GREY),)
                yield _Row(f"{name} -> {child}", "unchosen", depth + 1, name, (line,))

    return [row for name in graph.nodes if parents[name] is None for row in walk(name, 0, None)]


def _layout(rows: list[_Row]) -> list[_Box]:
    """Boxes one under the other, each indented by its depth."""
    boxes, y = [], float(TITLE_HEIGHT + MARGIN)
    for row in rows:
        width = max(_line_width(line) for line in row.lines) + 2 * PADDING
        height = len(row.lines) * LINE_HEIGHT + 2 * PADDING
        boxes.append(_Box(row, MARGIN + row.depth * INDENT, y, width, height))
        y += height + ROW_GAP
    return boxes


def _box_svg(box: _Box) -> list[str]:
    row = box.row
    fill, outline = _FILL[row.role]
    radius = 10 if row.role in ("source", "peripheral") else 3
    dash = ' stroke-dasharray="5 4"' if row.role == "unchosen" else ""
    group = "node" if row.role != "unchosen" else "unchosen-input"
    parts = [
        f'<g class="{group} {row.role}" data-name={quoteattr(row.key)}>',
        f'<rect x="{box.x:.1f}" y="{box.y:.1f}" width="{box.width:.1f}" '
        f'height="{box.height:.1f}" rx="{radius}" fill="{fill}" '
        f'stroke="{row.outline or outline}" stroke-width="1.5"{dash}/>',
    ]
    for index, line in enumerate(row.lines):
        y = box.y + PADDING + (index + 1) * LINE_HEIGHT - 4
        x = box.x + PADDING
        for span in line:
            weight = ' font-weight="bold"' if span.bold else ""
            parts.append(
                f'<text x="{x:.1f}" y="{y:.1f}" fill="{span.colour}"{weight}>'
                f"{escape(span.text)}</text>"
            )
            x += _text_width(span.text) + SPAN_GAP
    parts.append("</g>")
    return parts


def _branch_svg(parent: _Box, child: _Box) -> str:
    """The line from a parent down its stem and right into the child's box."""
    x, top = parent.x + STEM, parent.y + parent.height
    middle = child.y + child.height / 2
    dashed = child.row.role == "unchosen"
    colour = _FAINT if dashed else "#444444"
    dash = ' stroke-dasharray="5 4"' if dashed else ""
    return (
        f'<path d="M{x:.1f},{top:.1f} V{middle:.1f} H{child.x - 2:.1f}" fill="none" '
        f'stroke="{colour}" stroke-width="1.3"{dash} marker-end="url(#arrow)"/>'
    )


def plan_svg(graph: nx.DiGraph[str]) -> str:
    """The plan graph (from :func:`clockplan.graphs.plan_graph`) as a standalone SVG document."""
    boxes = _layout(_rows(graph))
    share = graph.graph["worst_share"] * 100
    subtitle = (
        f"plan {graph.graph['rank']} ({graph.graph['status']}), worst share {share:.2f} % "
        "of an allowance"
    )
    if any(box.row.role == "unchosen" for box in boxes):
        subtitle += "; dashed: a mux input not chosen"
    title = f"{graph.graph['title']}: clock tree"
    width = (
        MARGIN
        + max(
            _text_width(title, TITLE_CHARACTER_WIDTH),
            _text_width(subtitle),
            *(box.x - MARGIN + box.width for box in boxes),
        )
        + MARGIN
    )
    height = boxes[-1].y + boxes[-1].height + MARGIN if boxes else TITLE_HEIGHT + MARGIN
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
        f'<text x="{MARGIN}" y="{MARGIN + 26}" fill="{_GREY}">{escape(subtitle)}</text>',
    ]
    by_key = {box.row.key: box for box in boxes}
    parts += [
        _branch_svg(by_key[box.row.parent], box) for box in boxes if box.row.parent is not None
    ]
    for box in boxes:
        parts += _box_svg(box)
    parts.append("</svg>")
    return "\n".join(parts) + "\n"
