"""Ethernet reference clocks: MII 25 MHz, RMII 50 MHz, RGMII 125 MHz, each in its tolerance.

Sources (IEEE 802.3 clause numbers and the tolerances are from memory unless marked):

* ``ethernet-mii``: the 25 MHz reference of a 10/100 PHY, which times the 100BASE-TX
  transmitter (4B/5B, 125 MBd = 5 × 25 MHz). IEEE 802.3 Clause 24/25 (100BASE-TX, through
  ANSI X3.263 TP-PMD) requires ±50 ppm; network-controller design guides state the same
  ±50 ppm "to comply with IEEE specifications for 10/100 and 10/100/1000BASE-T" (seen).
  Clause 22's ±100 ppm for the MII clocks themselves is looser, so ±50 ppm governs.
* ``ethernet-rmii``: the shared 50 MHz reference of the RMII Consortium's RMII
  specification rev. 1.2 (the 50 MHz, one clock for MAC and PHY: seen in PHY datasheets);
  ±50 ppm, from memory, which also keeps the 100BASE-TX transmitter inside Clause 24/25.
* ``ethernet-rgmii``: the 125 MHz transmit clock at 1000 Mb/s; IEEE 802.3 Clause 35 (GMII)
  and Clause 40 (1000BASE-T, 125 MBd per pair) allow ±100 ppm (from memory). Design guides
  recommend ±50 ppm as a conservative target: set ``allowance = "50 ppm"`` to follow them.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import Peripheral, ToleranceRate, plain
from clockplan.peripherals.common import read_allowance, read_clock
from clockplan.quantities import format_hz, parse_integer_choices

__all__ = ["KINDS", "REFERENCES", "EthernetReference", "read"]


@dataclass(frozen=True)
class EthernetReference:
    """The reference clock one MAC–PHY interface needs and how exact it must be."""

    rate: Fraction
    """Hertz."""
    tolerance: Fraction
    basis: str


REFERENCES: dict[str, EthernetReference] = {
    "ethernet-mii": EthernetReference(
        Fraction(25_000_000),
        Fraction(50, 10**6),
        "IEEE 802.3 Cl. 24/25 (100BASE-TX): ±50 ppm (clause from memory)",
    ),
    "ethernet-rmii": EthernetReference(
        Fraction(50_000_000),
        Fraction(50, 10**6),
        "RMII spec rev 1.2: 50 MHz ±50 ppm (tolerance from memory)",
    ),
    "ethernet-rgmii": EthernetReference(
        Fraction(125_000_000),
        Fraction(100, 10**6),
        "IEEE 802.3 Cl. 35/40 (GMII, 1000BASE-T): ±100 ppm (from memory)",
    ),
}
"""Each Ethernet kind's reference clock."""

KINDS = tuple(REFERENCES)


def read(fields: Fields, name: str) -> Peripheral:
    """Read an Ethernet kind: ``from``, optional ``divide`` and ``allowance``."""
    kind = fields.take_str("kind", choices=KINDS)
    reference = REFERENCES[kind]
    clock = read_clock(fields)
    divide = fields.take("divide", parse_integer_choices, (1,))
    allowance, basis = read_allowance(fields, reference.tolerance, reference.basis)
    requirement = ToleranceRate(
        peripheral=name,
        label=f"{format_hz(reference.rate)} reference",
        setting=f"{name}.divide",
        target=reference.rate,
        allowance=allowance,
        allowance_basis=basis,
        divisor=plain(divide),
    )
    return Peripheral(name, kind, clock, (requirement,))
