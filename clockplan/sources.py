"""Reference oscillators: their kinds, candidate frequencies and error budgets.

A source's budget is the sum of its initial tolerance, its stability over the
operating temperature range and its aging over the product's life: the worst
case the board will see. The root-sum-square of the same terms is shown beside it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

__all__ = [
    "SourceKind",
    "SOURCE_KINDS",
    "Source",
    "Conditions",
    "ParabolicCurve",
    "TUNING_FORK_COEFFICIENT_PPM",
    "TUNING_FORK_TURNOVER_C",
]


@dataclass(frozen=True)
class SourceKind:
    """Default figures for one kind of oscillator; a scenario may override each."""

    name: str
    description: str
    tolerance: Fraction
    """Initial tolerance at 25 °C, as a ratio."""
    stability: Fraction
    """Band over the default operating temperature range, as a ratio."""
    aging_per_year: Fraction
    """Aging per year of service, as a ratio (the first year's figure, applied linearly)."""


_PPM = Fraction(1, 10**6)
_PERCENT = Fraction(1, 100)

SOURCE_KINDS: dict[str, SourceKind] = {
    kind.name: kind
    for kind in (
        # Typical figures inside the ranges crystal and oscillator makers publish for each
        # kind; the values themselves are common practice, no source.
        SourceKind(
            "crystal",
            "AT-cut quartz crystal with the chip's Pierce amplifier",
            20 * _PPM,
            30 * _PPM,
            3 * _PPM,
        ),
        SourceKind(
            "tuning-fork",
            "32.768 kHz tuning-fork crystal (parabolic temperature curve)",
            20 * _PPM,
            Fraction(0),
            3 * _PPM,
        ),
        SourceKind(
            "ceramic",
            "ceramic resonator",
            5 * Fraction(1, 1000),
            3 * Fraction(1, 1000),
            1 * Fraction(1, 1000),
        ),
        SourceKind(
            "oscillator", "packaged quartz oscillator module", Fraction(0), 50 * _PPM, 3 * _PPM
        ),
        SourceKind(
            "tcxo",
            "temperature-compensated crystal oscillator",
            2 * _PPM,
            Fraction(5, 2) * _PPM,
            1 * _PPM,
        ),
        SourceKind("mems", "MEMS oscillator", Fraction(0), 25 * _PPM, 1 * _PPM),
        SourceKind(
            "internal-rc",
            "the chip's own trimmed RC oscillator",
            1 * _PERCENT,
            2 * _PERCENT,
            Fraction(0),
        ),
        SourceKind("rc", "discrete RC oscillator", 5 * _PERCENT, 2 * _PERCENT, Fraction(0)),
        SourceKind("lc", "LC oscillator", 3 * _PERCENT, 1 * _PERCENT, Fraction(0)),
    )
}
"""Every source kind a scenario may name, with its default budget."""


TUNING_FORK_COEFFICIENT_PPM = Fraction(-34, 1000)
"""Typical parabolic coefficient of a 32.768 kHz tuning-fork crystal, ppm/°C².

−0.034 is a typical figure (from memory). The published spread: a tuning-fork crystal
datasheet gives −0.030 ± 0.01 ppm/°C² with its turnover at 25 ± 5 °C, and works the
example −0.030 × (45 − 25)² = −12.0 ppm at 45 °C; other cuts and small packages are
specified at −0.035 and −0.04 ppm/°C² (tuning-fork datasheets and crystal makers' notes).
Give the part's own figure with ``temperature_coefficient`` and ``turnover``.
"""
TUNING_FORK_TURNOVER_C = Fraction(25)
"""Typical turnover temperature of a tuning-fork crystal, °C (datasheets: 25 ± 5 °C)."""


@dataclass(frozen=True)
class Conditions:
    """Where and how long the board runs."""

    temperature: tuple[Fraction, Fraction] = (Fraction(-20), Fraction(70))
    """Operating temperature range in °C."""
    years: Fraction = Fraction(5)
    """Years of service that aging must cover."""


@dataclass(frozen=True)
class ParabolicCurve:
    """Tuning-fork temperature behaviour: Δf/f = k·(T − T0)²."""

    coefficient_ppm: Fraction = TUNING_FORK_COEFFICIENT_PPM
    """k, ppm per °C² (negative: the crystal slows away from the turnover)."""
    turnover_c: Fraction = TUNING_FORK_TURNOVER_C
    """T0, the turnover temperature, °C."""

    def offset(self, temperature_c: Fraction) -> Fraction:
        """Relative frequency offset at ``temperature_c``."""
        return self.coefficient_ppm * (temperature_c - self.turnover_c) ** 2 * _PPM

    def average_offset(self, low_c: Fraction, high_c: Fraction) -> Fraction:
        """Mean relative offset over a uniform spread of temperatures from low to high.

        The mean of (T − T0)² over [a, b] is ((b − T0)³ − (a − T0)³) / (3·(b − a)).
        """
        if low_c == high_c:
            return self.offset(low_c)
        low, high = low_c - self.turnover_c, high_c - self.turnover_c
        return self.coefficient_ppm * (high**3 - low**3) / (3 * (high - low)) * _PPM

    def extremes(self, low_c: Fraction, high_c: Fraction) -> tuple[Fraction, Fraction]:
        """Lowest and highest relative offset over the range."""
        offsets = [self.offset(low_c), self.offset(high_c)]
        if low_c <= self.turnover_c <= high_c:
            offsets.append(Fraction(0))
        return min(offsets), max(offsets)


@dataclass(frozen=True)
class Source:
    """One reference oscillator of a scenario and the frequencies the search may give it."""

    name: str
    kind: str
    candidates: tuple[Fraction, ...]
    """Candidate frequencies in hertz, in preference order (ties go to the earlier one)."""
    tolerance: Fraction
    """Initial tolerance at 25 °C, as a ratio."""
    stability: Fraction
    """Band over the operating temperature range, as a ratio."""
    aging: Fraction
    """Aging over the years of service, as a ratio."""
    pulling: Fraction = Fraction(0)
    """Offset from load-capacitance mismatch, as a ratio (zero when the circuit is not given)."""
    cost: Fraction | None = None
    """What the part costs, in any currency the scenario uses throughout (ranking by cost)."""

    @property
    def terms(self) -> dict[str, Fraction]:
        """The budget's terms by name, as ratios."""
        return {
            "tolerance": self.tolerance,
            "stability": self.stability,
            "aging": self.aging,
            "pulling": self.pulling,
        }

    @property
    def budget(self) -> Fraction:
        """Worst-case relative error of this source: the sum of its terms."""
        return sum(self.terms.values(), Fraction(0))

    @property
    def budget_rss(self) -> float:
        """Root-sum-square of the terms: a statistical figure, shown beside the worst case."""
        return math.sqrt(sum(float(term) ** 2 for term in self.terms.values()))


@dataclass(frozen=True)
class ComponentFrequency:
    """An oscillator's frequency computed from its parts, and how far the parts may move it."""

    nominal: Fraction
    """The formula's frequency rounded to 1 mHz, hertz."""
    tolerance: Fraction
    """Worst relative deviation from the parts' tolerances, plus the rounding, as a ratio."""


_ROUNDING = Fraction(1, 1000)
_FLOAT_GUARD = Fraction(1, 10**12)


def _rounded(frequency: float) -> tuple[Fraction, Fraction]:
    """The nominal to 1 mHz and the relative error that rounding (and float math) adds."""
    nominal = Fraction(round(frequency * 1000), 1000)
    if nominal <= 0:
        raise ValueError("the parts give a frequency below 1 mHz")
    return nominal, _ROUNDING / 2 / nominal + _FLOAT_GUARD


def rc_oscillator(
    r1: Fraction,
    r2: Fraction,
    capacitance: Fraction,
    resistor_tolerance: Fraction,
    capacitor_tolerance: Fraction,
) -> ComponentFrequency:
    """A 555-style astable: f = 1/(ln 2 · C · (R1 + 2·R2)), with the parts' worst case.

    Source: the timer astable handbook formula (see circuits.rc_astable_frequency). The
    frequency goes as 1/(R·C), so the worst relative rise is 1/((1 − tR)(1 − tC)) − 1,
    which is larger than the worst fall 1 − 1/((1 + tR)(1 + tC)); the budget takes it.
    """
    from clockplan.circuits import rc_astable_frequency

    nominal, rounding = _rounded(rc_astable_frequency(r1, r2, capacitance))
    rise = 1 / ((1 - resistor_tolerance) * (1 - capacitor_tolerance)) - 1
    return ComponentFrequency(nominal, rise + rounding)


def lc_oscillator(
    inductance: Fraction,
    capacitance: Fraction,
    inductor_tolerance: Fraction,
    capacitor_tolerance: Fraction,
) -> ComponentFrequency:
    """An LC oscillator at the tank's resonance f = 1/(2π·√(L·C)), with the parts' worst case.

    The frequency goes as 1/√(L·C): the worst relative rise 1/√((1 − tL)(1 − tC)) − 1 is
    rounded up to 1e-12 (a square root is not rational) and taken as the budget.
    """
    from clockplan.circuits import lc_resonance_frequency

    nominal, rounding = _rounded(lc_resonance_frequency(inductance, capacitance))
    product = float((1 - inductor_tolerance) * (1 - capacitor_tolerance))
    rise = Fraction(math.ceil((1 / math.sqrt(product) - 1) * 10**12), 10**12)
    return ComponentFrequency(nominal, rise + rounding)


def load_pulling(
    specified_load: Fraction,
    capacitors: tuple[Fraction, Fraction],
    stray: Fraction,
    motional: Fraction,
    shunt: Fraction,
) -> Fraction:
    """How far the built circuit pulls the crystal from its specified load, as a ratio.

    The built load is C1·C2/(C1 + C2) + stray; the shift between the two loads is
    (Cm/2)·(1/(C0 + CL_built) − 1/(C0 + CL_specified)) (crystal makers' pulling formula,
    see circuits.pulling). The budget takes its size.
    """
    from clockplan.circuits import load_capacitance, pulling

    built = load_capacitance(capacitors[0], capacitors[1], stray)
    return abs(pulling(motional, shunt, specified_load, built))
