"""Oscillator circuit formulas: Pierce load capacitors, pulling, gain margin, drive level, RC, LC.

Units are SI base units throughout: farads, ohms, hertz, volts, watts, siemens (A/V).
Where the arithmetic is rational the functions take and return exact ``Fraction`` values.
The critical transconductance and drive level carry a factor pi squared, the astable
formulas a natural logarithm and the LC resonance a square root and pi, so those five
return floats; their rational parts are still computed exactly before the last step.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from itertools import combinations_with_replacement
from typing import Literal

__all__ = [
    "PICOFARAD",
    "MIN_GAIN_MARGIN",
    "OSCILLATOR_GUIDE",
    "CapacitorSeries",
    "CapacitorPair",
    "PierceCrystal",
    "PierceBoard",
    "PierceAnalysis",
    "standard_capacitors",
    "load_capacitance",
    "equal_capacitor",
    "nearest_equal_pair",
    "nearest_unequal_pair",
    "pulling",
    "pulling_sensitivity",
    "critical_transconductance",
    "drive_level",
    "analyse_pierce",
    "rc_astable_frequency",
    "symmetric_astable_frequency",
    "lc_resonance_frequency",
]

PICOFARAD = Fraction(1, 10**12)
"""One picofarad in farads."""

OSCILLATOR_GUIDE = "a microcontroller maker's oscillator design guide"
"""Where gm_crit and the gain-margin rule come from, as shown to users."""

MIN_GAIN_MARGIN = 5
"""Smallest gain margin (gm / gm_crit) we accept for reliable start-up.

Source: a microcontroller maker's *Oscillator design guide* (an application note),
which defines the gain margin as gm / gm_crit and asks for at least 5; a public design
notebook applies it to a worked case (80 Ω, 16 MHz, C0 7 pF, CL 9 pF: gm_crit 0.8279 mA/V,
margin 20.53 with gm 17 mA/V). Crystal makers state the same rule as a negative resistance
at least five times the crystal's resistance (some accept three). No standard sets it.
"""

CapacitorSeries = Literal["E12", "E24"]

# Source: IEC 60063 preferred number series for resistors and capacitors, E12 and E24
# (the mantissas, as two significant digits; values written from memory).
_SERIES_MANTISSAS: dict[str, tuple[int, ...]] = {
    "E12": (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82),
    "E24": (
        10,
        11,
        12,
        13,
        15,
        16,
        18,
        20,
        22,
        24,
        27,
        30,
        33,
        36,
        39,
        43,
        47,
        51,
        56,
        62,
        68,
        75,
        82,
        91,
    ),
}
_SERIES_DECADES = range(3)
"""Decades offered for load capacitors: 1.0 pF to 910 pF."""

DEFAULT_MAX_PAIR_RATIO = Fraction(2)
"""Largest ratio between the two capacitors of an unequal pair; common practice, no source."""


def standard_capacitors(series: CapacitorSeries) -> tuple[Fraction, ...]:
    """Standard capacitor values of ``series`` from 1.0 pF up to the 100 pF decade, in farads."""
    if series not in _SERIES_MANTISSAS:
        raise ValueError(f"{series!r} is not a capacitor series; expected E12 or E24")
    return tuple(
        Fraction(mantissa * 10**decade, 10) * PICOFARAD
        for decade in _SERIES_DECADES
        for mantissa in _SERIES_MANTISSAS[series]
    )


def load_capacitance(first: Fraction, second: Fraction, stray: Fraction) -> Fraction:
    """Load capacitance a Pierce circuit presents to its crystal: C1*C2/(C1+C2) + C_stray."""
    if first <= 0 or second <= 0 or stray < 0:
        raise ValueError("capacitors must be positive and the stray capacitance not negative")
    return first * second / (first + second) + stray


def equal_capacitor(load: Fraction, stray: Fraction) -> Fraction:
    """Value of each capacitor of an equal pair giving ``load``: C1 = C2 = 2*(CL - C_stray)."""
    if stray < 0:
        raise ValueError("the stray capacitance cannot be negative")
    if stray >= load:
        raise ValueError("the stray capacitance must be below the load capacitance")
    return 2 * (load - stray)


@dataclass(frozen=True)
class CapacitorPair:
    """Two load capacitors on the crystal's pins and the stray capacitance beside them."""

    first: Fraction
    """The smaller (or equal) capacitor, farads."""
    second: Fraction
    """The larger (or equal) capacitor, farads."""
    stray: Fraction
    """Pin, trace and package capacitance in parallel with the crystal, farads."""

    @property
    def load(self) -> Fraction:
        """Load capacitance the pair gives the crystal, farads."""
        return load_capacitance(self.first, self.second, self.stray)

    @property
    def equal(self) -> bool:
        """Whether both capacitors have the same value."""
        return self.first == self.second


def nearest_equal_pair(
    load: Fraction, stray: Fraction, series: CapacitorSeries = "E12"
) -> CapacitorPair:
    """The equal pair of standard capacitors whose load capacitance is closest to ``load``."""
    ideal = equal_capacitor(load, stray)
    # The load rises with the capacitor value, so the nearest value gives the nearest load;
    # on a tie the smaller capacitor wins (min keeps the first of equal keys).
    best = min(standard_capacitors(series), key=lambda value: abs(value - ideal))
    return CapacitorPair(best, best, stray)


def nearest_unequal_pair(
    load: Fraction,
    stray: Fraction,
    series: CapacitorSeries = "E12",
    *,
    max_ratio: Fraction = DEFAULT_MAX_PAIR_RATIO,
) -> CapacitorPair:
    """The pair of standard capacitors (ratio at most ``max_ratio``) closest to ``load``.

    Ties go to the pair with the smaller ratio, then to the smaller capacitors.
    """
    equal_capacitor(load, stray)  # validates load and stray
    pairs = (
        CapacitorPair(first, second, stray)
        for first, second in combinations_with_replacement(standard_capacitors(series), 2)
        if second <= first * max_ratio
    )
    return min(
        pairs, key=lambda pair: (abs(pair.load - load), pair.second / pair.first, pair.first)
    )


def pulling(
    motional: Fraction, shunt: Fraction, load_from: Fraction, load_to: Fraction
) -> Fraction:
    """Relative frequency change when the load goes from ``load_from`` to ``load_to``.

    Δf/f = (Cm/2)·(1/(C0 + CL_to) − 1/(C0 + CL_from)); positive means the crystal speeds up.
    """
    _require_crystal(motional, shunt)
    return motional / 2 * (1 / (shunt + load_to) - 1 / (shunt + load_from))


def pulling_sensitivity(motional: Fraction, shunt: Fraction, load: Fraction) -> Fraction:
    """Relative frequency change per farad of load near ``load``: S = −Cm/(2·(C0 + CL)²).

    Multiply by ``PICOFARAD * 10**6`` for the usual ppm/pF figure.
    """
    _require_crystal(motional, shunt)
    return -motional / (2 * (shunt + load) ** 2)


def critical_transconductance(
    esr: Fraction, frequency: Fraction, shunt: Fraction, load: Fraction
) -> float:
    """Smallest amplifier transconductance that sustains oscillation, in A/V.

    gm_crit = 4·ESR·(2πF)²·(C0 + CL)² = 16·ESR·F²·(C0 + CL)² · π²; the rational part is exact,
    the factor π² makes the result a float. Source: *Oscillator design guide* (a microcontroller
    maker's application note; the formula as quoted from its revision 18, page 13, in its
    maker's user forum).
    """
    if esr <= 0 or frequency <= 0 or shunt < 0 or load <= 0:
        raise ValueError("ESR, frequency and load must be positive, the shunt not negative")
    return float(16 * esr * frequency**2 * (shunt + load) ** 2) * math.pi**2


def drive_level(
    esr: Fraction, frequency: Fraction, node_capacitance: Fraction, swing: Fraction
) -> float:
    """Power dissipated in the crystal, in watts: DL = ESR·(π·F·C_tot·V_pp)²/2.

    From I_rms = 2πF·C_tot·V_rms with V_rms = V_pp/(2√2), DL = I_rms²·ESR; the rational part
    is exact, the factor π² makes the result a float.
    """
    if esr <= 0 or frequency <= 0 or node_capacitance <= 0 or swing <= 0:
        raise ValueError("ESR, frequency, node capacitance and swing must be positive")
    return float(esr * (frequency * node_capacitance * swing) ** 2 / 2) * math.pi**2


def _require_crystal(motional: Fraction, shunt: Fraction) -> None:
    if motional <= 0 or shunt < 0:
        raise ValueError("the motional capacitance must be positive and the shunt not negative")


@dataclass(frozen=True)
class PierceCrystal:
    """What a crystal's datasheet gives; the optional figures enable more checks."""

    frequency: Fraction
    """Nominal frequency, hertz."""
    load: Fraction
    """Load capacitance the crystal is specified at, farads."""
    shunt: Fraction | None = None
    """Shunt (holder) capacitance C0, farads."""
    motional: Fraction | None = None
    """Motional capacitance Cm, farads."""
    esr: Fraction | None = None
    """Equivalent series resistance, ohms."""
    max_drive: Fraction | None = None
    """Largest drive level the crystal accepts, watts."""


@dataclass(frozen=True)
class PierceBoard:
    """What the board and the chip's oscillator amplifier add around the crystal."""

    stray: Fraction
    """Stray capacitance in parallel with the crystal, farads."""
    transconductance: Fraction | None = None
    """Amplifier transconductance gm from the chip's datasheet, A/V."""
    swing: Fraction | None = None
    """Peak-to-peak voltage on the crystal's pin, volts."""
    node_capacitance: Fraction | None = None
    """Total capacitance of the driven node for the drive level, farads (None: estimated)."""
    series: CapacitorSeries = "E12"
    """Capacitor series the load capacitors are picked from."""
    unequal: bool = False
    """Whether an unequal pair may be chosen when it comes closer to the load."""


@dataclass(frozen=True)
class PierceAnalysis:
    """Load capacitors, pulling, start-up margin and drive level of one Pierce circuit."""

    ideal_capacitor: Fraction
    """Each capacitor of the exact equal pair, farads."""
    pair: CapacitorPair
    """The standard capacitors chosen."""
    load_error: Fraction
    """Load capacitance of the chosen pair minus the crystal's specified load, farads."""
    pulling: Fraction | None
    """Relative frequency offset caused by ``load_error``; None without Cm and C0."""
    sensitivity: Fraction | None
    """Relative frequency change per farad at the built load; None without Cm and C0."""
    critical_transconductance: float | None
    """gm_crit at the built load, A/V; None without ESR and C0."""
    gain_margin: float | None
    """gm / gm_crit; None without the amplifier's gm."""
    node_capacitance: Fraction | None
    """Capacitance used for the drive level, farads; None without ESR and swing."""
    drive_level: float | None
    """Power in the crystal, watts; None without ESR and swing."""

    @property
    def starts_reliably(self) -> bool | None:
        """Whether the gain margin reaches :data:`MIN_GAIN_MARGIN`; None when unknown."""
        return None if self.gain_margin is None else self.gain_margin >= MIN_GAIN_MARGIN


def analyse_pierce(crystal: PierceCrystal, board: PierceBoard) -> PierceAnalysis:
    """Pick the load capacitors for ``crystal`` and check pulling, start-up and drive level.

    gm_crit and pulling use the load the chosen capacitors really give. Without a given node
    capacitance the drive level takes the larger capacitor plus half the stray (from memory).
    """
    pair = _choose_pair(crystal.load, board)
    built = pair.load
    motional, shunt, esr = crystal.motional, crystal.shunt, crystal.esr
    offset = sensitivity = None
    if motional is not None and shunt is not None:
        offset = pulling(motional, shunt, crystal.load, built)
        sensitivity = pulling_sensitivity(motional, shunt, built)
    gm_crit = margin = None
    if esr is not None and shunt is not None:
        gm_crit = critical_transconductance(esr, crystal.frequency, shunt, built)
        if board.transconductance is not None:
            margin = float(board.transconductance) / gm_crit
    node = power = None
    if esr is not None and board.swing is not None:
        node = board.node_capacitance
        if node is None:
            node = pair.second + pair.stray / 2
        power = drive_level(esr, crystal.frequency, node, board.swing)
    return PierceAnalysis(
        ideal_capacitor=equal_capacitor(crystal.load, board.stray),
        pair=pair,
        load_error=built - crystal.load,
        pulling=offset,
        sensitivity=sensitivity,
        critical_transconductance=gm_crit,
        gain_margin=margin,
        node_capacitance=node,
        drive_level=power,
    )


def _choose_pair(load: Fraction, board: PierceBoard) -> CapacitorPair:
    """The equal pair, or the unequal one when allowed and strictly closer to ``load``."""
    pair = nearest_equal_pair(load, board.stray, board.series)
    if board.unequal:
        unequal = nearest_unequal_pair(load, board.stray, board.series)
        if abs(unequal.load - load) < abs(pair.load - load):
            return unequal
    return pair


def rc_astable_frequency(r1: Fraction, r2: Fraction, capacitance: Fraction) -> float:
    """Frequency of a 555-style timer astable, hertz: f = 1/(ln 2 · C · (R1 + 2·R2)).

    Handbook form: high time ln2·(R1 + R2)·C, low time ln2·R2·C; the rounded form
    1.44/((R1 + 2·R2)·C) uses 1/ln 2 ≈ 1.4427.
    """
    if r1 < 0 or r2 <= 0 or capacitance <= 0:
        raise ValueError("R2 and C must be positive and R1 not negative")
    return 1 / (math.log(2) * float(capacitance * (r1 + 2 * r2)))


def symmetric_astable_frequency(resistance: Fraction, capacitance: Fraction) -> float:
    """Frequency of a symmetric two-transistor astable, hertz: f = 1/(2·ln 2·R·C).

    Each half period is ln2·R·C, the time the base capacitor takes to recharge to the
    switching point; the handbook form ignores the transistors' base-emitter drop.
    """
    if resistance <= 0 or capacitance <= 0:
        raise ValueError("R and C must be positive")
    return 1 / (2 * math.log(2) * float(resistance * capacitance))


def lc_resonance_frequency(inductance: Fraction, capacitance: Fraction) -> float:
    """Resonant frequency of an LC tank, hertz: f = 1/(2π·√(L·C))."""
    if inductance <= 0 or capacitance <= 0:
        raise ValueError("L and C must be positive")
    return 1 / (2 * math.pi * math.sqrt(float(inductance * capacitance)))
