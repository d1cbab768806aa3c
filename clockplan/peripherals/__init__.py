"""Peripheral kinds: one module per kind, each citing the source of its rules.

Each module defines ``KINDS`` (the names a scenario may write) and
``read(fields, name) -> Peripheral`` (a module with several kinds dispatches on ``kind``
itself). :data:`READERS` maps every kind name to its module's reader.
"""

from __future__ import annotations

from collections.abc import Callable

from clockplan._fields import Fields
from clockplan.peripherals import audio, buses, can, clock, ethernet, tick, timer, uart, usb
from clockplan.peripherals.base import Peripheral, Requirement

__all__ = ["READERS", "Peripheral", "Requirement", "read_peripheral"]

READERS: dict[str, Callable[[Fields, str], Peripheral]] = {
    kind: module.read
    for module in (audio, buses, can, clock, ethernet, tick, timer, uart, usb)
    for kind in module.KINDS
}


def read_peripheral(fields: Fields, name: str) -> Peripheral:
    """Read one ``[peripherals.NAME]`` table by its ``kind``."""
    kind = fields.take_str("kind", choices=tuple(READERS))
    return READERS[kind](fields, name)
