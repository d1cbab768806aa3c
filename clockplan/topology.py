"""The clock tree's shape, read from the scenario's own fields: no graph library needed.

Every node names what feeds it (``from``); from that come the checks a loader makes
(unknown names, one-input muxes, loops), the order in which clocks are computed, and the
oscillators a clock can come from. :mod:`clockplan.tree` builds a networkx graph only for
the views that draw or export one.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING

from clockplan._fields import hint
from clockplan.errors import ScenarioError

if TYPE_CHECKING:
    from clockplan.scenario import Scenario

__all__ = ["clock_inputs", "check_structure", "evaluation_order", "feeding_source_names"]


def clock_inputs(scenario: Scenario) -> dict[str, tuple[str, ...]]:
    """Each clock node, in file order, with the clocks that feed it (none for a source)."""
    inputs: dict[str, tuple[str, ...]] = {source.name: () for source in scenario.sources}
    inputs.update({pll.name: (pll.input,) for pll in scenario.plls})
    inputs.update({divider.name: (divider.input,) for divider in scenario.dividers})
    inputs.update({mux.name: tuple(mux.inputs) for mux in scenario.muxes})
    return inputs


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
    inputs = clock_inputs(scenario)
    placed = _ordered(inputs)
    if len(placed) < len(inputs):
        loop = _loop(inputs, set(placed))
        raise ScenarioError(
            scenario.file,
            _section_of(scenario, loop[0]) + ".from",
            "the clocks form a loop: " + " -> ".join(loop),
        )


def evaluation_order(scenario: Scenario) -> list[str]:
    """Clock nodes in an order where every node comes after what feeds it (file order on ties)."""
    return _ordered(clock_inputs(scenario))


def feeding_source_names(scenario: Scenario, node: str) -> list[str]:
    """The sources a node can be fed from (more than one only through a mux)."""
    inputs = clock_inputs(scenario)
    reached, pending = {node}, [node]
    while pending:
        for feed in inputs.get(pending.pop(), ()):
            if feed not in reached:
                reached.add(feed)
                pending.append(feed)
    return [source.name for source in scenario.sources if source.name in reached]


def _ordered(inputs: Mapping[str, Sequence[str]]) -> list[str]:
    """The nodes whose feeds all come before them, earliest in file order first; a node on
    (or behind) a loop is left out."""
    placed: list[str] = []
    done: set[str] = set()
    progress = True
    while progress:
        progress = False
        for name, feeds in inputs.items():
            if name not in done and all(feed in done for feed in feeds):
                placed.append(name)
                done.add(name)
                progress = True
                break
    return placed


def _loop(inputs: Mapping[str, Sequence[str]], placed: set[str]) -> list[str]:
    """One loop among the nodes that could not be placed, each feeding the next, from the
    first of them in file order: ``a -> b -> a``."""
    name = next(name for name in inputs if name not in placed)
    seen: list[str] = []
    while name not in seen:
        seen.append(name)
        name = next(feed for feed in inputs[name] if feed not in placed)
    loop = seen[seen.index(name) :][::-1]
    order = list(inputs)
    first = min(range(len(loop)), key=lambda index: order.index(loop[index]))
    loop = loop[first:] + loop[:first]
    return [*loop, loop[0]]


def _section_of(scenario: Scenario, name: str) -> str:
    for section, items in (
        ("plls", scenario.plls),
        ("dividers", scenario.dividers),
        ("muxes", scenario.muxes),
    ):
        if any(item.name == name for item in items):
            return f"{section}.{name}"
    return name
