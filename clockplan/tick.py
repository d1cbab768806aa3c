"""Divider chains down to a tick: exact tick rates, drift, temperature and pulse calibration.

A chain is a sequence of stages; each stage divides by one of its allowed whole numbers
(a binary ripple chain "pow2 15" is one stage that divides by 2**15). Every frequency and
relative error here is an exact ``Fraction``; numpy only narrows the search for the closest
settings, whose errors are then recomputed exactly.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from fractions import Fraction
from functools import cache
from itertools import islice
from typing import Literal

import numpy as np

from clockplan.peripherals.base import Divisors, largest
from clockplan.quantities import QuantityError, parse_stages
from clockplan.sources import (
    TUNING_FORK_COEFFICIENT_PPM,
    TUNING_FORK_TURNOVER_C,
    ParabolicCurve,
)

__all__ = [
    "SECONDS_PER_DAY",
    "DAYS_PER_MONTH",
    "DAYS_PER_YEAR",
    "PPM",
    "TUNING_FORK_COEFFICIENT_PPM",
    "TUNING_FORK_TURNOVER_C",
    "Stage",
    "Chain",
    "ChainSetting",
    "TickSearch",
    "Drift",
    "ParabolicCurve",
    "SymmetricBand",
    "TemperatureDrift",
    "PulseCalibration",
    "CalibrationSetting",
    "parse_chain",
    "suggest_chain",
    "search_chain",
    "drift",
    "temperature_drift",
    "best_calibration",
]

SECONDS_PER_DAY = 86_400
DAYS_PER_MONTH = 30
DAYS_PER_YEAR = 365
PPM = Fraction(1, 10**6)
"""One part per million as a plain ratio."""

MAX_DIVISION = 2**62
"""Largest total division a chain may reach; keeps every product inside int64."""
MAX_PREFIX_PRODUCTS = 2**24
"""Most partial products (all stages but the longest) the closest-setting search accepts."""
SEARCH_CHUNK = 2**16
"""Partial products handled per vectorised step, to bound memory."""
LISTED_SETTINGS = 10
"""How many exact or closest settings a search returns by default."""
REACH_FACTOR = 2
"""A chain whose closest tick is this factor or more off the target cannot reach it."""


@dataclass(frozen=True)
class Stage:
    """One divider stage and the whole numbers it may divide by."""

    text: str
    """The stage as written, e.g. ``"pow2 15"`` or ``"1..128"``."""
    choices: Divisors
    """Allowed divisors, ascending, without repeats."""

    @property
    def fixed(self) -> bool:
        """Whether the stage has a single divisor."""
        return len(self.choices) == 1


@dataclass(frozen=True)
class Chain:
    """Divider stages in signal order, from the source towards the tick."""

    stages: tuple[Stage, ...]
    """The stages; the tick is the source divided by one divisor of each."""

    @property
    def setting_count(self) -> int:
        """How many settings the chain has (one divisor per stage)."""
        return math.prod(len(stage.choices) for stage in self.stages)

    @property
    def largest_division(self) -> int:
        """Product of every stage's largest divisor."""
        return math.prod(largest(stage.choices) for stage in self.stages)

    @property
    def text(self) -> str:
        """The chain as it is written on the command line."""
        return " x ".join(stage.text for stage in self.stages)


def parse_chain(text: str) -> Chain:
    """Read stages joined by ``x`` or ``×``: ``"pow2 15"``, ``"1..128 x 1..32768"``.

    A stage is a whole number, ``"a..b"``, ``"pow2 n"``, ``"pow2 a..b"`` or a choice of
    them separated by commas (``"1,8,64,256,1024"``), as everywhere in clockplan.
    """
    chain = Chain(tuple(Stage(stage, choices) for stage, choices in parse_stages(text)))
    if chain.largest_division > MAX_DIVISION:
        raise QuantityError(f"{text!r} divides by more than 2**62; no counter is that long")
    return chain


def suggest_chain(source_hz: Fraction, rate_hz: Fraction) -> Chain:
    """A two-stage chain for ``rate_hz``: binary stages for the powers of two, then the rest.

    When source/rate is not a whole number the nearest whole division is used.
    """
    _require_positive(source_hz, rate_hz)
    ratio = source_hz / rate_hz
    division = min(
        (math.floor(ratio), math.ceil(ratio)),
        key=lambda whole: abs(ratio / whole - 1) if whole else math.inf,
    )
    binary = (division & -division).bit_length() - 1
    odd = division >> binary
    stages = [Stage(f"pow2 {binary}", (2**binary,))] if binary else []
    if odd > 1 or not stages:
        stages.append(Stage(str(odd), (odd,)))
    return Chain(tuple(stages))


@dataclass(frozen=True)
class ChainSetting:
    """One divisor per stage and the tick it gives."""

    divisors: tuple[int, ...]
    """The divisor of each stage, in signal order."""
    tick_hz: Fraction
    """Tick rate, hertz."""
    error: Fraction
    """Relative error of the tick against the target rate (tick/target − 1)."""
    settings_with_same_tick: int
    """How many settings of the chain give this same tick."""

    @property
    def division(self) -> int:
        """Total division, the product of the divisors."""
        return math.prod(self.divisors)


@dataclass(frozen=True)
class TickSearch:
    """Every exact setting of a chain for a tick, or its closest settings."""

    source_hz: Fraction
    """Source frequency, hertz."""
    rate_hz: Fraction
    """Target tick rate, hertz."""
    chain: Chain
    """The chain searched."""
    exact_count: int
    """How many settings give the tick exactly (0 when none does)."""
    settings: tuple[ChainSetting, ...]
    """The first exact settings (in ascending order of divisors), or the closest ticks."""

    @property
    def exact(self) -> bool:
        """Whether some setting gives the tick exactly."""
        return self.exact_count > 0

    @property
    def best(self) -> ChainSetting:
        """The first exact setting, or the closest one."""
        return self.settings[0]


def search_chain(
    source_hz: Fraction, rate_hz: Fraction, chain: Chain, *, listed: int = LISTED_SETTINGS
) -> TickSearch:
    """Find every setting of ``chain`` that divides ``source_hz`` to exactly ``rate_hz``.

    An exact setting needs a product of divisors equal to source/rate, so only divisors of
    that whole number are tried, stage by stage. When none exists the ``listed`` closest
    distinct ticks are returned instead.
    """
    _require_positive(source_hz, rate_hz)
    if chain.largest_division > MAX_DIVISION:
        raise QuantityError(f"chain {chain.text!r} divides by more than 2**62")
    stages = tuple(np.array(stage.choices, dtype=np.int64) for stage in chain.stages)
    ratio = source_hz / rate_hz
    if ratio.denominator == 1 and ratio <= MAX_DIVISION:
        exact_count = _count_settings(stages, ratio.numerator)
        if exact_count:
            settings = tuple(
                _setting(source_hz, rate_hz, divisors, exact_count)
                for divisors in islice(_settings_for(stages, ratio.numerator), listed)
            )
            return TickSearch(source_hz, rate_hz, chain, exact_count, settings)
    closest = tuple(
        _setting(
            source_hz,
            rate_hz,
            next(_settings_for(stages, division)),
            _count_settings(stages, division),
        )
        for division in _closest_divisions(stages, ratio, listed)
    )
    off_by = closest[0].tick_hz / rate_hz
    if not 1 / REACH_FACTOR < off_by < REACH_FACTOR:
        raise QuantityError(
            f"chain {chain.text!r} cannot reach a {float(rate_hz):g} Hz tick from "
            f"{float(source_hz):g} Hz: its closest tick is {float(closest[0].tick_hz):g} Hz"
        )
    return TickSearch(source_hz, rate_hz, chain, 0, closest)


def _setting(
    source_hz: Fraction, rate_hz: Fraction, divisors: Sequence[int], count: int
) -> ChainSetting:
    tick = source_hz / math.prod(divisors)
    return ChainSetting(tuple(divisors), tick, tick / rate_hz - 1, count)


def _dividing(stage: np.ndarray, remaining: int) -> list[int]:
    """The divisors of ``stage`` that divide ``remaining`` exactly."""
    candidates = stage[stage <= remaining]
    return [int(value) for value in candidates[remaining % candidates == 0]]


def _holds(stage: np.ndarray, value: int) -> bool:
    position = int(np.searchsorted(stage, value))
    return position < stage.size and int(stage[position]) == value


def _settings_for(stages: tuple[np.ndarray, ...], division: int) -> Iterator[tuple[int, ...]]:
    """Every setting whose divisors multiply to ``division``, in ascending order."""
    last = len(stages) - 1

    def settings_from(index: int, remaining: int) -> Iterator[tuple[int, ...]]:
        if index == last:
            if _holds(stages[last], remaining):
                yield (remaining,)
            return
        for divisor in _dividing(stages[index], remaining):
            for rest in settings_from(index + 1, remaining // divisor):
                yield (divisor, *rest)

    return settings_from(0, division)


def _count_settings(stages: tuple[np.ndarray, ...], division: int) -> int:
    """How many settings multiply to ``division``, counted without listing them."""
    last = len(stages) - 1

    @cache
    def count_from(index: int, remaining: int) -> int:
        if index == last:
            return int(_holds(stages[last], remaining))
        return sum(
            count_from(index + 1, remaining // divisor)
            for divisor in _dividing(stages[index], remaining)
        )

    return count_from(0, division)


def _closest_divisions(stages: tuple[np.ndarray, ...], ratio: Fraction, wanted: int) -> list[int]:
    """The ``wanted`` reachable total divisions whose tick is closest to the target.

    All stages but the longest are multiplied out (vectorised, without repeats); for each
    partial product the longest stage's best divisors sit next to ratio/partial, found by
    binary search. The ``wanted`` nearest on either side cover the overall best ``wanted``.
    """
    by_length = sorted(stages, key=len)
    longest = by_length[-1]
    partial = np.ones(1, dtype=np.int64)
    for stage in by_length[:-1]:
        if partial.size * stage.size > MAX_PREFIX_PRODUCTS:
            raise QuantityError(
                "the chain has too many settings to search for the closest tick; "
                "narrow the programmable stages"
            )
        partial = _distinct(np.multiply.outer(partial, stage).ravel())
    target = float(ratio)
    shortlist: list[int] = []
    for chunk in np.array_split(partial, -(-partial.size // SEARCH_CHUNK)):
        position = np.searchsorted(longest, target / chunk)
        neighbours = np.clip(position[:, None] + np.arange(-wanted, wanted), 0, longest.size - 1)
        divisions = _distinct((chunk[:, None] * longest[neighbours]).ravel())
        rough_order = np.argsort(np.abs(target / divisions - 1.0), kind="stable")
        shortlist += divisions[rough_order[: 4 * wanted]].tolist()
    ranked = sorted(set(shortlist), key=lambda division: (abs(ratio / division - 1), division))
    return ranked[:wanted]


def _distinct(values: np.ndarray) -> np.ndarray:
    """Sorted values without repeats (sorting beats numpy's hashing unique on these sizes)."""
    ordered = np.sort(values)
    return ordered[np.concatenate(([True], ordered[1:] != ordered[:-1]))]


def _require_positive(source_hz: Fraction, rate_hz: Fraction) -> None:
    if source_hz <= 0 or rate_hz <= 0:
        raise QuantityError("the source frequency and the tick rate must be positive")


@dataclass(frozen=True)
class Drift:
    """How far a clock running at a relative error wanders, in seconds."""

    error: Fraction
    """Relative error of the tick (positive: the clock runs fast and gains time)."""
    per_day: Fraction
    """Seconds gained per day (negative: lost)."""
    per_month: Fraction
    """Seconds gained per 30-day month."""
    per_year: Fraction
    """Seconds gained per 365-day year."""


def drift(error: Fraction) -> Drift:
    """Seconds gained per day, month and year at relative ``error`` (1 ppm = 86.4 ms/day)."""
    per_day = error * SECONDS_PER_DAY
    return Drift(error, per_day, per_day * DAYS_PER_MONTH, per_day * DAYS_PER_YEAR)


@dataclass(frozen=True)
class SymmetricBand:
    """A source that stays within ±half_width of nominal over temperature, shape unknown."""

    half_width: Fraction
    """Half the band, relative (20 ppm is Fraction(1, 50000))."""

    def extremes(self, low_c: Fraction, high_c: Fraction) -> tuple[Fraction, Fraction]:
        """Lowest and highest relative offset: the band's edges, whatever the range."""
        return -self.half_width, self.half_width


@dataclass(frozen=True)
class TemperatureDrift:
    """Tick error and drift over a temperature range, the synthesis error included."""

    behaviour: ParabolicCurve | SymmetricBand
    """How the source's frequency moves with temperature."""
    low_c: Fraction
    """Lowest temperature, °C."""
    high_c: Fraction
    """Highest temperature, °C."""
    lowest: Drift
    """Drift at the most negative total error over the range."""
    highest: Drift
    """Drift at the most positive total error over the range."""
    average: Drift | None
    """Drift at the mean error over a uniform temperature spread; None for a band."""

    @property
    def worst(self) -> Drift:
        """Whichever extreme drifts further."""
        return max(self.lowest, self.highest, key=lambda item: abs(item.error))


def temperature_drift(
    base_error: Fraction,
    behaviour: ParabolicCurve | SymmetricBand,
    low_c: Fraction,
    high_c: Fraction,
) -> TemperatureDrift:
    """Worst and average drift of a tick with ``base_error`` whose source follows ``behaviour``.

    Errors add: total = synthesis error + temperature offset (first order, as in a ppm budget).
    """
    if low_c > high_c:
        raise QuantityError(f"the temperature range {low_c}..{high_c} runs backwards")
    lowest, highest = behaviour.extremes(low_c, high_c)
    average = (
        drift(base_error + behaviour.average_offset(low_c, high_c))
        if isinstance(behaviour, ParabolicCurve)
        else None
    )
    return TemperatureDrift(
        behaviour, low_c, high_c, drift(base_error + lowest), drift(base_error + highest), average
    )


@dataclass(frozen=True)
class PulseCalibration:
    """Digital rate trimming: over a window of source cycles, add or skip a few cycles."""

    window_cycles: int
    """Length of the calibration window, in source cycles."""
    cycles_per_step: int = 1
    """Cycles added or skipped per calibration step."""
    max_steps: int | None = None
    """Most steps the calibration holds; None for no limit."""

    def __post_init__(self) -> None:
        if self.window_cycles < 1 or self.cycles_per_step < 1:
            raise QuantityError("the window and the cycles per step must be whole and positive")
        if self.cycles_per_step >= self.window_cycles:
            raise QuantityError("a calibration step must be shorter than the window")
        if self.max_steps is not None and self.max_steps < 0:
            raise QuantityError("the largest step count cannot be negative")

    @property
    def step(self) -> Fraction:
        """Rate change of one step, relative: cycles_per_step / window_cycles."""
        return Fraction(self.cycles_per_step, self.window_cycles)

    @property
    def reach(self) -> Fraction | None:
        """Largest correction either way, relative; None without a step limit."""
        return None if self.max_steps is None else self.step * self.max_steps


@dataclass(frozen=True)
class CalibrationSetting:
    """The step count that best cancels a measured offset."""

    measured: Fraction
    """Measured relative offset (positive: the clock runs fast)."""
    steps: int
    """Number of steps to apply."""
    action: Literal["skip", "add", "none"]
    """Skip cycles to slow a fast clock, add cycles to speed a slow one."""
    correction: Fraction
    """Relative rate change the steps make."""
    limited: bool
    """Whether the step limit stopped a better correction."""

    @property
    def residual(self) -> Fraction:
        """Relative offset left after calibration."""
        return self.measured + self.correction


def best_calibration(measured: Fraction, calibration: PulseCalibration) -> CalibrationSetting:
    """The number of steps (and whether to add or skip) that best cancels ``measured``.

    Over a window of W source cycles, skipping n cycles slows the count by exactly n/W;
    adding speeds it by n/W. Ties between two step counts go to the smaller count.
    """
    wanted = abs(measured) / calibration.step
    steps = math.floor(wanted)
    if wanted - steps > Fraction(1, 2):
        steps += 1
    limit = calibration.max_steps
    limited = limit is not None and steps > limit
    if limit is not None:
        steps = min(steps, limit)
    action: Literal["skip", "add", "none"] = (
        "none" if steps == 0 else "skip" if measured > 0 else "add"
    )
    sign = -1 if measured > 0 else 1
    return CalibrationSetting(measured, steps, action, sign * steps * calibration.step, limited)
