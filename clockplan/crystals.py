"""Which oscillator frequencies serve a set of rates: ranked, exact ones first, no scenario file.

Every rate is reached from the oscillator (or from one PLL's VCO) by a whole divisor. A
UART divides by oversampling × its baud divisor, an audio codec wants a master clock of
ratio × fs, USB full speed wants 48 MHz. So each rate asks for a *divided clock* ``c``
(oversampling × baud / 2**fraction_bits, ratio × fs, 48 MHz, or the rate itself), and
an oscillator ``f`` gives it exactly when ``f / c`` is an allowed divisor count.

Exact with integer division: the frequencies that give every rate exactly are exactly
the common multiples of the divided clocks, i.e. the multiples of their lcm (for
fractions, lcm(a/b, c/d) = lcm(a, c) / gcd(b, d)) whose quotients lie in every divisor
range. On a stepped range ``low + k·step`` those multiples form one arithmetic
progression in ``k``, found by solving a linear congruence, so no candidate is tried.
With a PLL the same holds for the VCO: every exact VCO is a multiple of that lcm.

Inexact ranking is screened with numpy, all candidates at once: for each rate the best
divisor comes from exact integer floor division (candidates are whole multiples of a
common unit), the error is a float of exact integer residuals, and exactness is the
integer residual being zero. Candidates within 1e-9 of the K-th best float are then
evaluated and re-ranked exactly with Fraction. With a PLL the screen runs once per
reduced ratio M/R, over only the candidates whose PFD and VCO limits allow it; on long
ranges a strided sample first sets a threshold no worse than the K-th best, and only
candidates whose VCO lies within it of a multiple of the most selective rate's divided
clock are screened (the others cannot reach the top K).
"""

from __future__ import annotations

import bisect
import functools
import math
from collections import defaultdict
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from clockplan.peripherals.base import Divisors
from clockplan.peripherals.uart import per_end_allowance
from clockplan.peripherals.usb import FULL_SPEED_CLOCK, full_speed_rule
from clockplan.quantities import QuantityError, format_hz

__all__ = [
    "DEFAULT_ALLOWANCE",
    "MAX_GRID",
    "Candidates",
    "RateTarget",
    "PllLimits",
    "PllSetting",
    "FrequencyGrid",
    "RateResult",
    "Candidate",
    "CrystalSearch",
    "uart_targets",
    "usb_full_speed_target",
    "audio_targets",
    "plain_targets",
    "frequency_grid",
    "exact_multiple",
    "evaluate",
    "search_crystals",
]

DEFAULT_ALLOWANCE = Fraction(1, 1000)
"""±0.1 % for audio and plain rates: common practice, no source (0.1 % is 1.7 cents of pitch)."""

MAX_GRID = 5_000_000
"""Most candidates a stepped range may hold: each takes a few array cells per rate."""

MAX_PLL_SETTINGS = 200_000
"""Most reference-divider × multiplier pairs a PLL may allow before the search refuses."""

SCREEN_BAND = 1e-9
"""Relative width kept around the K-th best float share; floats here err by ~1e-15."""

SAMPLE_SIZE = 4096
"""Candidates in the strided sample that sets the filtered screen's threshold."""

FULL_SCREEN_LIMIT = 20_000
"""Up to this many candidates the PLL screen looks at every one (cheap enough)."""

MAX_WINDOWS = 20_000
"""Most divided-clock multiples one rate may have across the VCO range to act as a filter."""

_CHUNK = 1 << 15
"""Candidates screened per numpy pass: small enough that the temporaries stay in cache."""


@dataclass(frozen=True)
class RateTarget:
    """One rate to reach: the divided clock it needs, its divisor counts and its allowance."""

    label: str
    """How the rate is shown: "115200 baud", "USB full speed", "fs 48 kHz", "1 kHz"."""
    kind: str
    """``uart``, ``usb-full-speed``, ``audio`` or ``rate``."""
    rate: Fraction
    """The rate asked for, in hertz (baud for a UART, fs for audio)."""
    clock: Fraction
    """The clock one divisor count must give, in hertz: source / count = clock is exact."""
    counts: Divisors
    """Allowed divisor counts, in steps of 1/``counts_per_divisor`` of the divisor."""
    counts_per_divisor: int
    """Counts per whole divisor: 2**fraction_bits for a fractional baud divisor, else 1."""
    allowance: Fraction
    """Largest relative error allowed for this rate."""
    allowance_basis: str
    """Where the allowance comes from: a standard, a derivation or common practice."""

    def achieved(self, source: Fraction, count: int) -> Fraction:
        """The rate given by ``source`` hertz through ``count`` divisor counts."""
        return source / (count * self.clock) * self.rate


@dataclass(frozen=True)
class PllSetting:
    """One setting of the simple PLL: oscillator ÷ reference divider × multiplier = VCO."""

    reference_divider: int
    multiplier: int
    vco: Fraction
    """VCO frequency in hertz."""

    @property
    def pfd(self) -> Fraction:
        """Phase-detector frequency in hertz (the VCO over the multiplier)."""
        return self.vco / self.multiplier


@dataclass(frozen=True)
class PllLimits:
    """A simple integer-N PLL feeding every rate's divisor from one VCO."""

    reference_divider: Divisors
    multiplier: Divisors
    vco: tuple[Fraction, Fraction]
    """Allowed VCO range (low, high), hertz."""
    pfd: tuple[Fraction, Fraction]
    """Allowed phase-detector range (low, high), hertz."""

    def settings(self, frequency: Fraction) -> tuple[PllSetting, ...]:
        """Every allowed setting for one oscillator: lowest VCO first, then smallest divider."""
        found = []
        for divider in self.reference_divider:
            pfd = frequency / divider
            if not self.pfd[0] <= pfd <= self.pfd[1]:
                continue
            lowest = math.ceil(self.vco[0] / pfd)
            for multiplier in self.multiplier[bisect.bisect_left(self.multiplier, lowest) :]:
                if pfd * multiplier > self.vco[1]:
                    break
                found.append(PllSetting(divider, multiplier, pfd * multiplier))
        return tuple(sorted(found, key=lambda s: (s.vco, s.reference_divider)))


@dataclass(frozen=True)
class FrequencyGrid:
    """Candidates ``low + k·step`` for k = 0 … count − 1."""

    low: Fraction
    step: Fraction
    count: int

    @property
    def high(self) -> Fraction:
        """The last candidate, hertz."""
        return self.low + (self.count - 1) * self.step

    def frequency(self, index: int) -> Fraction:
        """Candidate number ``index``, hertz."""
        return self.low + index * self.step


Candidates = tuple[Fraction, ...] | FrequencyGrid
"""Where to look: a list of frequencies (catalog or the user's) or a stepped range."""


@dataclass(frozen=True)
class RateResult:
    """One rate from one oscillator: the best divisor and its exact error."""

    target: RateTarget
    count: int
    """Divisor in counts (1/``counts_per_divisor`` steps)."""
    achieved: Fraction
    """Rate achieved, hertz (or baud)."""
    error: Fraction
    """achieved / wanted − 1."""

    @property
    def divisor(self) -> Fraction:
        """The divisor as a number: whole, or with a binary fraction for a UART."""
        return Fraction(self.count, self.target.counts_per_divisor)

    @property
    def share(self) -> Fraction:
        """|error| as a share of the rate's allowance (1 = at the limit)."""
        return abs(self.error) / self.target.allowance


@dataclass(frozen=True)
class Candidate:
    """One oscillator frequency with every rate's best divisor (and the PLL setting used)."""

    frequency: Fraction
    """Oscillator frequency, hertz."""
    pll: PllSetting | None
    rates: tuple[RateResult, ...]

    @property
    def worst(self) -> RateResult:
        """The rate using the largest share of its allowance (the first of equals)."""
        return max(self.rates, key=lambda result: result.share)

    @property
    def worst_share(self) -> Fraction:
        """The ranking figure: the largest share of an allowance over every rate."""
        return self.worst.share

    @property
    def exact(self) -> bool:
        """Every rate is exact."""
        return all(result.error == 0 for result in self.rates)

    @property
    def fits(self) -> bool:
        """Every rate is inside its allowance."""
        return self.worst_share <= 1


@dataclass(frozen=True)
class CrystalSearch:
    """The ranked answer and what was searched."""

    targets: tuple[RateTarget, ...]
    pll: PllLimits | None
    candidates: Candidates
    candidate_count: int
    ranked: tuple[Candidate, ...]
    """Best first: exact ones, then by worst share, ties by frequency ascending."""
    exact_count: int
    """How many candidates give every rate exactly."""
    exact_multiple: Fraction
    """lcm of the divided clocks: every exact oscillator (or VCO, with a PLL) is its multiple."""
    without_setting: int
    """Candidates no PLL setting can take (always 0 with integer division)."""


def _divisor_counts(divisor: Divisors, scale: int) -> Divisors:
    """Divisor counts in 1/scale steps: whole a..b becomes a·scale .. b·scale (as in uart.py)."""
    if scale == 1:
        return divisor
    if isinstance(divisor, range):
        return range(divisor.start * scale, (divisor.stop - 1) * scale + 1)
    return tuple(value * scale + part for value in divisor for part in range(scale))


def _plain_number(value: Fraction) -> str:
    """A rate without a unit, as people write baud rates: "115200", "110.5"."""
    return str(value.numerator) if value.denominator == 1 else f"{float(value):g}"


def uart_targets(
    bauds: Sequence[Fraction], *, oversampling: int, fraction_bits: int, divisor: Divisors
) -> tuple[RateTarget, ...]:
    """UART rates: baud = source / (oversampling × divisor); 8N1 allowance from uart.py."""
    scale = 2**fraction_bits
    allowance = per_end_allowance(8, False, oversampling)
    basis = f"derived for 8N1 at {oversampling}x: equal ends at opposite extremes"
    return tuple(
        RateTarget(
            label=f"{_plain_number(baud)} baud",
            kind="uart",
            rate=baud,
            clock=baud * oversampling / scale,
            counts=_divisor_counts(divisor, scale),
            counts_per_divisor=scale,
            allowance=allowance,
            allowance_basis=basis,
        )
        for baud in bauds
    )


def usb_full_speed_target(*, divisor: Divisors, full_speed_only_device: bool = False) -> RateTarget:
    """USB full speed: 48 MHz within USB 2.0 §7.1.11's tolerance for the device (from usb.py)."""
    allowance, basis = full_speed_rule(full_speed_only_device)
    return RateTarget(
        label="USB full speed",
        kind="usb-full-speed",
        rate=FULL_SPEED_CLOCK,
        clock=FULL_SPEED_CLOCK,
        counts=divisor,
        counts_per_divisor=1,
        allowance=allowance,
        allowance_basis=basis,
    )


def audio_targets(
    sample_rates: Sequence[Fraction],
    *,
    ratio: int,
    allowance: Fraction,
    basis: str,
    divisor: Divisors,
) -> tuple[RateTarget, ...]:
    """Audio sampling rates: the divisor must give the master clock, ratio × fs."""
    return tuple(
        RateTarget(
            label=f"fs {format_hz(rate)}",
            kind="audio",
            rate=rate,
            clock=rate * ratio,
            counts=divisor,
            counts_per_divisor=1,
            allowance=allowance,
            allowance_basis=basis,
        )
        for rate in sample_rates
    )


def plain_targets(
    rates: Sequence[Fraction], *, allowance: Fraction, basis: str, divisor: Divisors
) -> tuple[RateTarget, ...]:
    """Plain rates: the divisor gives the rate itself."""
    return tuple(
        RateTarget(
            label=format_hz(rate),
            kind="rate",
            rate=rate,
            clock=rate,
            counts=divisor,
            counts_per_divisor=1,
            allowance=allowance,
            allowance_basis=basis,
        )
        for rate in rates
    )


def frequency_grid(low: Fraction, high: Fraction, step: Fraction) -> FrequencyGrid:
    """The candidates ``low, low + step, …`` up to ``high``; refuses empty or huge ranges."""
    if step <= 0:
        raise QuantityError(f"a step of {format_hz(step)} is not positive")
    if low >= high:
        raise QuantityError(f"the range {format_hz(low)}..{format_hz(high)} is empty")
    if step > high - low:
        raise QuantityError(
            f"a step of {format_hz(step)} is larger than the range "
            f"{format_hz(low)}..{format_hz(high)} ({format_hz(high - low)} wide)"
        )
    count = math.floor((high - low) / step) + 1
    if count > MAX_GRID:
        raise QuantityError(
            f"a step of {format_hz(step)} gives {count:,} candidates, more than {MAX_GRID:,}; "
            "choose a larger step"
        )
    return FrequencyGrid(low, step, count)


def exact_multiple(targets: Sequence[RateTarget]) -> Fraction:
    """lcm of the divided clocks: the smallest frequency every divided clock divides."""
    clocks = [target.clock for target in targets]
    return Fraction(
        math.lcm(*(clock.numerator for clock in clocks)),
        math.gcd(*(clock.denominator for clock in clocks)),
    )


def _best_rate(source: Fraction, target: RateTarget) -> RateResult:
    """The divisor count nearest in relative error (the smaller count on a tie), exactly."""
    quotient = source / target.clock
    floor = quotient.numerator // quotient.denominator
    position = bisect.bisect_right(target.counts, floor)
    options = target.counts[max(position - 1, 0) : position + 1]
    results = []
    for count in options:
        achieved = target.achieved(source, count)
        results.append(RateResult(target, count, achieved, achieved / target.rate - 1))
    return min(results, key=lambda result: abs(result.error))


def evaluate(
    frequency: Fraction, targets: Sequence[RateTarget], pll: PllLimits | None = None
) -> Candidate | None:
    """Exact figures for one oscillator; with a PLL the VCO with the smallest worst share.

    Among equally good VCOs the lowest wins, then the smallest reference divider. VCOs
    are screened with floats first and only those within ``SCREEN_BAND`` of the best
    are evaluated exactly. Returns None when no PLL setting takes this oscillator.
    """
    if pll is None:
        return Candidate(frequency, None, tuple(_best_rate(frequency, t) for t in targets))
    distinct: dict[Fraction, PllSetting] = {}
    for setting in pll.settings(frequency):
        distinct.setdefault(setting.vco, setting)
    settings = list(distinct.values())
    if not settings:
        return None
    shares = _vco_shares([setting.vco for setting in settings], targets)
    near = shares <= shares.min() * (1 + SCREEN_BAND)
    candidates = [
        Candidate(frequency, setting, _rates_at(setting.vco, tuple(targets)))
        for setting, keep in zip(settings, near, strict=True)
        if keep
    ]
    return min(candidates, key=lambda candidate: candidate.worst_share)


@functools.lru_cache(maxsize=4096)
def _rates_at(vco: Fraction, targets: tuple[RateTarget, ...]) -> tuple[RateResult, ...]:
    """Every rate's best divisor from one VCO; cached, as many oscillators share a VCO."""
    return tuple(_best_rate(vco, target) for target in targets)


def _vco_shares(vcos: Sequence[Fraction], targets: Sequence[RateTarget]) -> np.ndarray:
    """Float worst share for each VCO (ascending), from exact integers."""
    scale = math.lcm(*(vco.denominator for vco in vcos))
    values = _integer_array([int(vco * scale) for vco in vcos])
    return _worst_shares(values, 1, scale, targets)


def _ranking_key(candidate: Candidate) -> tuple[bool, Fraction, Fraction]:
    return (not candidate.exact, candidate.worst_share, candidate.frequency)


def search_crystals(
    targets: Sequence[RateTarget],
    candidates: Candidates,
    *,
    pll: PllLimits | None = None,
    top: int = 10,
) -> CrystalSearch:
    """Rank oscillator frequencies for these rates: exact first, then by worst share.

    On a stepped range whose divisors are spans, the exact candidates come from number
    theory alone (see the module docstring); the screen runs only when fewer than
    ``top`` are exact.
    """
    if not targets:
        raise QuantityError("no rates to search for; give at least one")
    if top < 1:
        raise QuantityError(f"top {top} lists nothing; give at least 1")
    targets = tuple(targets)
    multiple = exact_multiple(targets)
    grid = candidates if isinstance(candidates, FrequencyGrid) else None
    frequencies = () if isinstance(candidates, FrequencyGrid) else tuple(sorted(set(candidates)))
    spans_only = all(_is_span(target.counts) for target in targets)

    def found(
        frequency_at: Callable[[int], Fraction],
        indices: Sequence[int] | np.ndarray,
        exact_count: int,
        without_setting: int,
    ) -> CrystalSearch:
        evaluated = [_evaluated(frequency_at(int(index)), targets, pll) for index in indices]
        ranked = tuple(sorted(evaluated, key=_ranking_key)[:top])
        count = grid.count if grid is not None else len(frequencies)
        return CrystalSearch(
            targets, pll, candidates, count, ranked, exact_count, multiple, without_setting
        )

    if grid is not None and pll is None and spans_only:
        first, stride, exact_count = _progression(grid, multiple, *_divisor_window(targets))
        if exact_count >= top:
            return found(grid.frequency, range(first, first + top * stride, stride), exact_count, 0)
    scale, values = _candidate_values(grid, frequencies)

    def frequency_at(index: int) -> Fraction:
        return Fraction(int(values[index]), scale)

    if pll is None:
        shares = _screen(values, scale, targets, [((1, 1), 0, len(values))])
        return found(frequency_at, _shortlist(shares, top), int(np.count_nonzero(shares == 0)), 0)
    spans = _pll_spans(values, scale, pll)
    without_setting = len(values) - _covered(spans, len(values))
    if grid is not None and spans_only:
        exact = np.flatnonzero(_pll_exact_mask(grid, targets, pll, multiple))
        if len(exact) >= top:
            return found(frequency_at, exact[:top], len(exact), without_setting)
    filtered = None
    if len(values) > FULL_SCREEN_LIMIT:
        filtered = _filtered_pll_screen(values, scale, targets, pll, spans, top)
    shares = _screen(values, scale, targets, spans) if filtered is None else filtered
    exact_count = int(np.count_nonzero(shares == 0))
    return found(frequency_at, _shortlist(shares, top), exact_count, without_setting)


def _evaluated(
    frequency: Fraction, targets: tuple[RateTarget, ...], pll: PllLimits | None
) -> Candidate:
    candidate = evaluate(frequency, targets, pll)
    if candidate is None:  # the screen only passes oscillators some PLL setting takes
        raise AssertionError(f"no PLL setting for {frequency} Hz after the screen found one")
    return candidate


def _is_span(counts: Divisors) -> bool:
    return isinstance(counts, range) and counts.step == 1


def _divisor_window(targets: Sequence[RateTarget]) -> tuple[Fraction, Fraction]:
    """The source range in which every rate's divisor count stays inside its span."""
    lowest = max(t.clock * t.counts[0] for t in targets)
    highest = min(t.clock * t.counts[-1] for t in targets)
    return lowest, highest


def _progression(
    grid: FrequencyGrid, modulus: Fraction, lowest: Fraction, highest: Fraction
) -> tuple[int, int, int]:
    """Candidates that are multiples of ``modulus`` in [lowest, highest]: first, stride, count.

    Candidate k is ``low + k·step``; ``low + k·step ≡ 0 (mod modulus)`` is a linear
    congruence in k, solved once; its solutions are every ``stride``-th index.
    """
    denominator = math.lcm(grid.low.denominator, grid.step.denominator, modulus.denominator)
    low = int(grid.low * denominator)
    step = int(grid.step * denominator)
    whole_modulus = int(modulus * denominator)
    # k·(step/g) ≡ −low/g (mod whole_modulus/g), g = gcd(step, whole_modulus).
    common = math.gcd(step, whole_modulus)
    stride = whole_modulus // common
    if low % common:
        return 0, stride, 0
    first = (-low // common) * pow(step // common, -1, stride) % stride
    start = max(0, math.ceil((lowest - grid.low) / grid.step))
    stop = min(grid.count - 1, math.floor((highest - grid.low) / grid.step))
    first += math.ceil((start - first) / stride) * stride
    if start > stop or first > stop:
        return first, stride, 0
    return first, stride, (stop - first) // stride + 1


def _pll_exact_mask(
    grid: FrequencyGrid, targets: Sequence[RateTarget], pll: PllLimits, multiple: Fraction
) -> np.ndarray:
    """Which candidates some PLL setting makes exact for every rate, by congruences.

    With setting (R, M) the VCO f·M/R is exact when it is a multiple of ``multiple``,
    so f must be a multiple of multiple·R/M inside the PFD, VCO and divisor windows.
    """
    mask = np.zeros(grid.count, dtype=bool)
    lowest, highest = _divisor_window(targets)
    vco_low, vco_high = max(pll.vco[0], lowest), min(pll.vco[1], highest)
    if vco_low > vco_high:
        return mask
    _check_pll_size(pll)
    for divider in pll.reference_divider:
        for multiplier in pll.multiplier:
            low = max(pll.pfd[0] * divider, vco_low * divider / multiplier)
            high = min(pll.pfd[1] * divider, vco_high * divider / multiplier)
            if low > high:
                continue
            first, stride, count = _progression(grid, multiple * divider / multiplier, low, high)
            if count:
                mask[first : first + (count - 1) * stride + 1 : stride] = True
    return mask


def _integer_array(whole: Sequence[int]) -> np.ndarray:
    """Whole numbers as int64 when they fit with room for products, else as Python ints."""
    small = not whole or max(whole) < 2**62
    return np.array(whole, dtype=np.int64 if small else object)


def _candidate_values(
    grid: FrequencyGrid | None, frequencies: tuple[Fraction, ...]
) -> tuple[int, np.ndarray]:
    """Candidates as whole numbers of 1/scale hertz, ascending, and that scale."""
    if grid is not None:
        scale = math.lcm(grid.low.denominator, grid.step.denominator)
        low, step = int(grid.low * scale), int(grid.step * scale)
        index = np.arange(grid.count, dtype=np.int64)
        if int(grid.high * scale) >= 2**62:
            index = index.astype(object)
        return scale, low + step * index
    scale = math.lcm(*(f.denominator for f in frequencies)) if frequencies else 1
    return scale, _integer_array([int(f * scale) for f in frequencies])


def _shortlist(shares: np.ndarray, top: int) -> np.ndarray:
    """Indices to evaluate exactly: the first ``top`` exact ones, else the band near the K-th."""
    exact = np.flatnonzero(shares == 0)
    if len(exact) >= top:
        return exact[:top]
    wanted = top - len(exact)
    inexact = np.flatnonzero(np.isfinite(shares) & (shares > 0))
    if len(inexact) > wanted:
        kth = np.partition(shares[inexact], wanted - 1)[wanted - 1]
        inexact = inexact[shares[inexact] <= kth * (1 + SCREEN_BAND)]
    return np.concatenate([exact, inexact])


Span = tuple[tuple[int, int], int, int]
"""A reduced ratio (M, R) and the index span [start, stop) of candidates it may take."""


def _screen(
    values: np.ndarray, scale: int, targets: Sequence[RateTarget], spans: Sequence[Span]
) -> np.ndarray:
    """Float worst share per candidate (0.0 exactly when exact, inf when no PLL setting)."""
    worst = np.full(len(values), np.inf)
    for (multiplier, divider), start, stop in spans:
        for chunk in range(start, stop, _CHUNK):
            end = min(chunk + _CHUNK, stop)
            shares = _worst_shares(values[chunk:end], multiplier, divider * scale, targets)
            np.minimum(worst[chunk:end], shares, out=worst[chunk:end])
    return worst


def _check_pll_size(pll: PllLimits) -> None:
    pairs = len(pll.reference_divider) * len(pll.multiplier)
    if pairs > MAX_PLL_SETTINGS:
        raise QuantityError(
            f"the PLL allows {pairs:,} reference-divider × multiplier pairs, more than "
            f"{MAX_PLL_SETTINGS:,}; narrow them"
        )


def _pll_spans(values: np.ndarray, scale: int, pll: PllLimits) -> list[Span]:
    """Per reduced ratio M/R, the index spans of candidates some (R, M) with it may take."""
    _check_pll_size(pll)
    intervals: dict[tuple[int, int], list[tuple[int, int]]] = defaultdict(list)
    for divider in pll.reference_divider:
        for multiplier in pll.multiplier:
            # Oscillator f takes (R, M) when f/R is in the PFD range and f·M/R in the VCO range.
            low = max(pll.pfd[0] * divider, pll.vco[0] * divider / multiplier) * scale
            high = min(pll.pfd[1] * divider, pll.vco[1] * divider / multiplier) * scale
            if low <= high:
                common = math.gcd(multiplier, divider)
                ratio = (multiplier // common, divider // common)
                intervals[ratio].append((math.ceil(low), math.floor(high)))
    spans = []
    for ratio in sorted(intervals):
        for lowest, highest in _merged(intervals[ratio]):
            start = int(np.searchsorted(values, lowest, side="left"))
            stop = int(np.searchsorted(values, highest, side="right"))
            if start < stop:
                spans.append((ratio, start, stop))
    return spans


def _covered(spans: Sequence[Span], count: int) -> int:
    """How many candidates at least one span holds."""
    covered = np.zeros(count, dtype=bool)
    for _, start, stop in spans:
        covered[start:stop] = True
    return int(np.count_nonzero(covered))


def _merged(intervals: list[tuple[int, int]]) -> list[tuple[int, int]]:
    """Whole-number intervals merged where they overlap, ascending."""
    merged: list[tuple[int, int]] = []
    for low, high in sorted(intervals):
        if merged and low <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], high))
        else:
            merged.append((low, high))
    return merged


def _filtered_pll_screen(
    values: np.ndarray,
    scale: int,
    targets: Sequence[RateTarget],
    pll: PllLimits,
    spans: Sequence[Span],
    top: int,
) -> np.ndarray | None:
    """The screen on only the candidates that can beat a threshold; None if none filters.

    A strided sample gives a threshold T no worse than the K-th best share. A candidate
    can reach share ≤ T only if its VCO lies within T × allowance of a multiple of one
    rate's divided clock; for the most selective rate those windows, mapped back through
    each ratio M/R, are few index ranges. Candidates outside them have share > T, so
    they cannot enter the top K; they are left at inf.
    """
    sample = np.unique(np.linspace(0, len(values) - 1, SAMPLE_SIZE).astype(np.int64))
    sample_shares = _screen(values[sample], scale, targets, _sample_spans(spans, sample))
    finite = sample_shares[np.isfinite(sample_shares)]
    if len(finite) < top:
        return None
    threshold = float(np.partition(finite, top - 1)[top - 1])
    target = _most_selective(targets, threshold, pll)
    if target is None:
        return None
    half_width = threshold * float(target.allowance) * (1 + 1e-6) + 1e-12
    clock = float(target.clock)
    frequencies = np.asarray(values, dtype=np.float64) / scale
    worst = np.full(len(values), np.inf)
    for (multiplier, divider), start, stop in spans:
        ratio = multiplier / divider
        counts = _counts_between(  # one count of slack on each side against float rounding
            target.counts,
            math.floor(frequencies[start] * ratio / (clock * (1 + half_width))) - 1,
            math.ceil(frequencies[stop - 1] * ratio / (clock * (1 - half_width))) + 1,
        )
        if len(counts) == 0:
            continue
        window = frequencies[start:stop]
        lows = counts * clock * (1 - half_width) / ratio * (1 - 1e-12)
        highs = counts * clock * (1 + half_width) / ratio * (1 + 1e-12)
        firsts = np.searchsorted(window, lows, side="left") + start
        lasts = np.searchsorted(window, highs, side="right") + start
        indices = _index_ranges(firsts, lasts)
        for chunk in range(0, len(indices), _CHUNK):
            part = indices[chunk : chunk + _CHUNK]
            shares = _worst_shares(values[part], multiplier, divider * scale, targets)
            worst[part] = np.minimum(worst[part], shares)
    return worst


def _sample_spans(spans: Sequence[Span], sample: np.ndarray) -> list[Span]:
    """The spans re-indexed onto the sample's positions."""
    moved = []
    for ratio, start, stop in spans:
        first = int(np.searchsorted(sample, start, side="left"))
        last = int(np.searchsorted(sample, stop, side="left"))
        if first < last:
            moved.append((ratio, first, last))
    return moved


def _most_selective(
    targets: Sequence[RateTarget], threshold: float, pll: PllLimits
) -> RateTarget | None:
    """The rate whose within-threshold VCO windows cover the least of the VCO range.

    Its windows (width 2·T·allowance·VCO, one per divided-clock multiple) cover about
    2·T·allowance·VCO / clock of the axis; a rate covering more than a quarter, or with
    too many windows, does not filter.
    """
    middle = float(pll.vco[0] + pll.vco[1]) / 2
    best, best_cover = None, 0.25
    for target in targets:
        windows = float(pll.vco[1] - pll.vco[0]) / float(target.clock)
        cover = 2 * threshold * float(target.allowance) * middle / float(target.clock)
        if windows <= MAX_WINDOWS and cover < best_cover:
            best, best_cover = target, cover
    return best


def _counts_between(counts: Divisors, lowest: int, highest: int) -> np.ndarray:
    """The allowed counts in [lowest, highest], ascending."""
    if _is_span(counts):
        return np.arange(max(lowest, counts[0]), min(highest, counts[-1]) + 1)
    table = np.asarray(counts)
    return table[(table >= lowest) & (table <= highest)]


def _index_ranges(firsts: np.ndarray, lasts: np.ndarray) -> np.ndarray:
    """All indices of the ranges [first, last), concatenated."""
    lengths = np.maximum(lasts - firsts, 0)
    total = int(lengths.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    ends = np.cumsum(lengths)
    offsets = np.repeat(firsts - (ends - lengths), lengths)
    indices: np.ndarray = np.arange(total, dtype=np.int64) + offsets
    return indices


def _worst_shares(
    values: np.ndarray, multiplier: int, divider: int, targets: Sequence[RateTarget]
) -> np.ndarray:
    """Worst float share over every rate for sources ``values × multiplier / divider``."""
    worst = np.zeros(len(values))
    if len(values) == 0:
        return worst
    largest = int(values.max())
    for target in targets:
        numerator = multiplier * target.clock.denominator
        denominator = divider * target.clock.numerator
        bound = max(largest * numerator + denominator, (target.counts[-1] + 1) * denominator)
        typed = values.astype(object) if values.dtype != object and bound >= 2**62 else values
        np.maximum(worst, _rate_shares(typed, numerator, denominator, target), out=worst)
    return worst


def _rate_shares(
    values: np.ndarray, numerator: int, denominator: int, target: RateTarget
) -> np.ndarray:
    """Float share of the best divisor for quotients ``values × numerator / denominator``.

    The quotient's floor is exact integer division; the nearest allowed counts at or
    below and above it (clipped to the allowed ones) leave exact integer residuals, so a
    zero share means exactly zero error.
    """
    counts = target.counts
    scaled = values * numerator
    floor = scaled // denominator
    if _is_span(counts):
        nearest = (np.clip(floor, counts[0], counts[-1]), np.clip(floor + 1, counts[0], counts[-1]))
    else:
        table = np.asarray(counts, dtype=values.dtype)
        position = np.searchsorted(table, floor, side="right")
        nearest = (
            table[np.clip(position - 1, 0, len(table) - 1)],
            table[np.clip(position, 0, len(table) - 1)],
        )
    best: np.ndarray | None = None
    for count in nearest:
        product = count * denominator
        residual = np.abs(scaled - product)
        if residual.dtype == object:  # Python integers: convert each exactly-rounded
            residual, product = residual.astype(np.float64), product.astype(np.float64)
        error: np.ndarray = np.true_divide(residual, product, dtype=np.float64)
        best = error if best is None else np.minimum(best, error, out=best)
    assert best is not None
    best *= 1 / float(target.allowance)
    return best
