"""CAN and CAN FD: the bit timing built from the input clock, with the bus's own tolerance.

Bit rate = input_clock / (prescaler × quanta), quanta = SYNC (1) + PROP + PHASE1 + PHASE2 time
quanta; the sample point sits after PHASE1: (1 + PROP + PHASE1) / quanta. The search picks the
quanta count (one :class:`Option` each) and the prescaler; for every quanta count this module
builds the segment split closest to the wanted sample point and the largest oscillator
tolerance that split allows.

Sources:

* Segment limits of classical CAN (PROP 1–8, PHASE1 1–8, PHASE2 from the information
  processing time of at most 2 tq up to 8, SJW ≤ min(4, PHASE1), 8–25 tq per bit, at most
  1 Mbit/s): CAN Specification 2.0 Part B, bit-timing requirements (section number from
  memory), as restated by microcontroller CAN chapters and by F. Hartwich and A.
  Bassemir, *The Configuration of the CAN Bit Timing*, 6th International CAN Conference,
  Turin, 1999. We read "PHASE2 = max(PHASE1, IPT)" as PHASE2 ≥ IPT, as the CiA DS-102
  table below does (PHASE2 = 2 with PROP + PHASE1 = 13). SJW ≤ min(PHASE1, PHASE2) is also
  stated in microcontroller CAN chapters.
* Oscillator tolerance (each node's deviation from nominal, two nodes at opposite ends
  already accounted for), both conditions must hold:
  I  df ≤ min(PHASE1, PHASE2) / (2 · (13 · quanta − PHASE2)),
  II df ≤ SJW / (20 · quanta).
  Source: Hartwich and Bassemir (above), the section on the oscillator tolerance range,
  and ISO 11898-1 (clause not given here); restated in microcontroller CAN reference
  manuals. CAN Specification 2.0 Part B §9 "Oscillator Tolerance" states only the result
  for the most tolerant timing, "a maximum oscillator tolerance of 1.58 %", and the rule of
  thumb that it allows a ceramic resonator at bus speeds up to 125 kbit/s.
* Default sample point: CiA DS-102 v2.0 recommendation (75 % at 1 Mbit/s, 80 % at
  800 kbit/s, 87.5 % at 500 kbit/s and below); a rate between two table rows takes the row of
  the next higher rate (our reading). The ± 2.5 percentage-point window around it is our
  own default: it lets the search trade a little position for a more exact bit rate or a
  wider tolerance.
* CAN FD data phase: condition III df ≤ SJW_D / (20 · data quanta), the analogue of II for
  the data bit time (ISO 11898-1:2015; from memory). The data bit time may not be longer
  than the nominal one (ISO 11898-1:2015; from memory, clause not confirmed). Not applied:
  ISO 11898-1:2015's two further conditions that mix the nominal and the data bit times
  (from memory, they cover the switch from the data phase back to nominal bit timing); we
  could not confirm their form from a published source. Nor do we hold both phases to one
  prescaler (CiA's generic-setting advice); narrow ``data_prescaler`` and ``prescaler`` to
  do so. Data-phase defaults (sample point 75 %, window ± 5 points, i.e. 70–80 %) are
  common practice, no source; the CAN FD segment ranges are typical controller ranges,
  from memory: set them from your controller's description.
"""

from __future__ import annotations

import bisect
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction

from clockplan._fields import Fields
from clockplan.peripherals.base import (
    Divisors,
    Option,
    Options,
    Peripheral,
    ToleranceRate,
    largest,
    times,
)
from clockplan.peripherals.common import read_clock
from clockplan.quantities import (
    QuantityError,
    format_hz,
    format_relative,
    parse_frequency,
    parse_integer_choices,
    parse_relative,
)

__all__ = [
    "KINDS",
    "BitTiming",
    "SegmentLimits",
    "condition_one",
    "condition_two",
    "nominal_tolerance",
    "data_tolerance",
    "recommended_sample_point",
    "best_split",
    "phase1_fits",
    "timing_options",
    "read",
]

KINDS = ("can", "can-fd")

CLASSICAL_MAX_BITRATE = Fraction(1_000_000)
"""Classical CAN runs at most 1 Mbit/s (CAN 2.0; also the nominal phase of CAN FD)."""
NOMINAL_WINDOW = Fraction(25, 1000)
"""The nominal sample point may sit ± 2.5 percentage points from the wanted one (our default)."""
DATA_SAMPLE_POINT = Fraction(75, 100)
"""Default data-phase sample point, 75 %: common practice, no source."""
DATA_WINDOW = Fraction(5, 100)
"""The data-phase sample point may sit ± 5 points from it, 70–80 % (our default)."""


@dataclass(frozen=True)
class SegmentLimits:
    """What a controller can hold: allowed segment lengths in time quanta, and the largest SJW."""

    propagation: Divisors
    phase1: Divisors
    phase2: Divisors
    sjw: int


CLASSICAL_LIMITS = SegmentLimits(range(1, 9), range(1, 9), range(2, 9), 4)
"""CAN 2.0 Part B: PROP 1–8, PHASE1 1–8, PHASE2 from IPT (2 tq) to 8, SJW at most 4."""
FD_NOMINAL_LIMITS = SegmentLimits(range(1, 33), range(1, 33), range(2, 33), 32)
"""Typical CAN FD controller, nominal phase (from memory; override from the controller)."""
FD_DATA_LIMITS = SegmentLimits(range(0, 17), range(1, 17), range(1, 17), 16)
"""Typical CAN FD controller, data phase (from memory; override from the controller)."""


@dataclass(frozen=True)
class BitTiming:
    """One bit time: its quanta and how they split around the sample point."""

    quanta: int
    propagation: int
    phase1: int
    phase2: int
    sjw: int

    @property
    def sample_point(self) -> Fraction:
        """Where the bit is sampled, as a share of the bit time."""
        return Fraction(1 + self.propagation + self.phase1, self.quanta)

    def label(self) -> str:
        """ "16 tq, sample point 87.5 %, SJW 1": the timing in a few words."""
        point = f"{float(self.sample_point) * 100:.4g} %"
        return f"{self.quanta} tq, sample point {point}, SJW {self.sjw}"

    def settings(self) -> tuple[tuple[str, int], ...]:
        """The fixed register-level values of this timing."""
        return (
            ("quanta", self.quanta),
            ("propagation", self.propagation),
            ("phase1", self.phase1),
            ("phase2", self.phase2),
            ("sjw", self.sjw),
        )


def condition_one(timing: BitTiming) -> Fraction:
    """Condition I: the phase buffers must absorb 13 bit times of drift (error/overload flags)."""
    shortest = min(timing.phase1, timing.phase2)
    return Fraction(shortest, 2 * (13 * timing.quanta - timing.phase2))


def condition_two(timing: BitTiming) -> Fraction:
    """Condition II: one SJW must absorb 10 bit times of drift between resynchronisations."""
    return Fraction(timing.sjw, 20 * timing.quanta)


def nominal_tolerance(timing: BitTiming) -> Fraction:
    """Largest oscillator deviation a nominal (classical) bit timing allows: min(I, II)."""
    return min(condition_one(timing), condition_two(timing))


def data_tolerance(timing: BitTiming) -> Fraction:
    """CAN FD data phase, condition III: SJW_D / (20 · data quanta) (from memory)."""
    return Fraction(timing.sjw, 20 * timing.quanta)


def recommended_sample_point(bitrate: Fraction) -> Fraction:
    """CiA DS-102: 75 % above 800 kbit/s, 80 % above 500 kbit/s, else 87.5 %."""
    if bitrate > 800_000:
        return Fraction(3, 4)
    if bitrate > 500_000:
        return Fraction(4, 5)
    return Fraction(7, 8)


def best_split(
    quanta: int,
    sample_point: Fraction,
    window: Fraction,
    limits: SegmentLimits,
    tolerance: Callable[[BitTiming], Fraction],
    *,
    fits: Sequence[Sequence[int]] | None = None,
) -> BitTiming | None:
    """The split of ``quanta`` closest to ``sample_point`` (within ``window``), else None.

    PHASE1 is the shortest length ≥ PHASE2 that leaves PROP inside its limits (the tolerance
    depends only on min(PHASE1, PHASE2), so the rest goes to the propagation segment); SJW is
    the largest allowed, min(limit, PHASE1, PHASE2). Ties go to the larger tolerance.
    ``fits`` is :func:`phase1_fits` of ``limits``, when the caller already has it.
    """
    if fits is None or len(fits) < quanta:
        fits = phase1_fits(limits, quanta)
    best: tuple[tuple[Fraction, Fraction, int], BitTiming] | None = None
    for phase2 in limits.phase2:
        if phase2 > quanta - 2:  # SYNC and PHASE1 need a quantum each
            continue
        distance = abs(Fraction(quanta - phase2, quanta) - sample_point)  # the sample point
        if distance > window:
            continue
        rest = quanta - 1 - phase2
        phase1 = _phase1_for(fits[rest], phase2)
        if phase1 is None:
            continue
        sjw = min(limits.sjw, phase1, phase2)
        if sjw < 1:
            continue
        timing = BitTiming(quanta, rest - phase1, phase1, phase2, sjw)
        key = (distance, -tolerance(timing), phase2)
        if best is None or key < best[0]:
            best = (key, timing)
    return best[1] if best else None


def phase1_fits(limits: SegmentLimits, quanta: int) -> tuple[tuple[int, ...], ...]:
    """For each ``rest`` below ``quanta``, the PHASE1 lengths that leave PROP = rest − PHASE1
    inside its limits, ascending: computed once, so a split is a look-up, not a search."""
    allowed = frozenset(limits.propagation)
    phase1 = sorted(value for value in limits.phase1 if value < quanta)
    return tuple(
        tuple(value for value in phase1 if value <= rest and rest - value in allowed)
        for rest in range(quanta)
    )


def _phase1_for(fits: Sequence[int], phase2: int) -> int | None:
    """The shortest fitting PHASE1 at least PHASE2 long, else the longest shorter one."""
    if not fits:
        return None
    index = bisect.bisect_left(fits, phase2)
    return fits[index] if index < len(fits) else fits[-1]


def timing_options(
    quanta: Divisors,
    prescaler: Divisors,
    sample_point: Fraction,
    window: Fraction,
    limits: SegmentLimits,
    tolerance: Callable[[BitTiming], Fraction],
    allowance: Fraction | None = None,
) -> tuple[Option, ...]:
    """One option per quanta count that has a split inside the window.

    The divisor is prescaler × quanta; the allowance is the timing's own tolerance unless
    ``allowance`` (the scenario's override) is given.
    """
    options = []
    fits = phase1_fits(limits, largest(quanta) + 1)
    for count in quanta:
        timing = best_split(count, sample_point, window, limits, tolerance, fits=fits)
        if timing is None:
            continue
        options.append(
            Option(
                divisors=times(prescaler, count),
                allowance=allowance if allowance is not None else tolerance(timing),
                label=timing.label(),
                factor=count,
                settings=timing.settings(),
            )
        )
    return tuple(options)


def _bit_rate(value: object) -> Fraction:
    return parse_frequency(value, bare_unit="Hz")


def _share(value: object) -> Fraction:
    share = parse_relative(value)
    if not 0 < share < 1:
        raise QuantityError(f"{value!r} is not a share of the bit time between 0 and 100 %")
    return share


@dataclass(frozen=True)
class _Phase:
    """The keys of one bit-time phase, read from the table (prefix "" or "data_")."""

    bitrate: Fraction
    prescaler: Divisors
    quanta: Divisors
    sample_point: Fraction
    window: Fraction
    limits: SegmentLimits
    allowance: Fraction | None
    basis: str


def _read_phase(
    fields: Fields,
    prefix: str,
    *,
    quanta: Divisors,
    prescaler: Divisors,
    limits: SegmentLimits,
    sample_point: Fraction | None,
    window: Fraction,
    basis: str,
) -> _Phase:
    bitrate = fields.take(f"{prefix}bitrate", _bit_rate)
    chosen_prescaler = fields.take(f"{prefix}prescaler", parse_integer_choices, prescaler)
    chosen_quanta = fields.take(f"{prefix}quanta", _quanta, quanta)
    point = fields.take(
        f"{prefix}sample_point",
        _share,
        sample_point if sample_point is not None else recommended_sample_point(bitrate),
    )
    window = fields.take(f"{prefix}sample_point_window", parse_relative, window)
    segments = SegmentLimits(
        fields.take(f"{prefix}propagation", _zero_or_more, limits.propagation),
        fields.take(f"{prefix}phase1", _segment, limits.phase1),
        fields.take(f"{prefix}phase2", _segment, limits.phase2),
        fields.take_int(f"{prefix}sjw", limits.sjw, minimum=1, maximum=1024),
    )
    allowance = fields.take(f"{prefix}allowance", parse_relative, None)
    if allowance is not None:
        if allowance <= 0:
            raise fields.error(f"{prefix}allowance", "must be above zero")
        basis = "set in the scenario"
    return _Phase(
        bitrate, chosen_prescaler, chosen_quanta, point, window, segments, allowance, basis
    )


MAX_QUANTA = 512
"""The most time quanta per bit accepted: more than any controller counts (common practice,
no source); a segment is shorter still."""


def _quanta(value: object) -> Divisors:
    values = parse_integer_choices(value, minimum=3)
    if largest(values) > MAX_QUANTA:
        raise QuantityError(f"{largest(values)} quanta per bit is more than any controller counts")
    return values


def _segment(value: object, *, minimum: int = 1) -> Divisors:
    values = parse_integer_choices(value, minimum=minimum)
    if largest(values) > MAX_QUANTA:
        raise QuantityError(
            f"{largest(values)} quanta in one segment is more than any controller counts"
        )
    return values


def _zero_or_more(value: object) -> Divisors:
    return _segment(value, minimum=0)


def _phase_requirement(
    fields: Fields,
    name: str,
    phase: _Phase,
    *,
    label: str,
    setting: str,
    tolerance: Callable[[BitTiming], Fraction],
    key: str,
) -> ToleranceRate:
    options = timing_options(
        phase.quanta,
        phase.prescaler,
        phase.sample_point,
        phase.window,
        phase.limits,
        tolerance,
        phase.allowance,
    )
    if not options:
        low = format_relative(phase.sample_point - phase.window)
        high = format_relative(phase.sample_point + phase.window)
        raise fields.error(
            key,
            f"no quanta count allowed by the segment limits puts the sample point within "
            f"{low} .. {high}; widen the quanta, segment limits or sample-point window",
        )
    return ToleranceRate(
        peripheral=name,
        label=label,
        setting=setting,
        target=phase.bitrate,
        allowance=max(filter(None, (option.allowance for option in options))),
        allowance_basis=phase.basis,
        divisor=Options(options),
        unit="bit/s",
    )


def read(fields: Fields, name: str) -> Peripheral:
    """Read ``kind = "can"`` or ``"can-fd"``: bit rate(s), prescaler, quanta and segment limits."""
    kind = fields.take_str("kind", choices=KINDS)
    clock = read_clock(fields)
    classical = kind == "can"
    nominal = _read_phase(
        fields,
        "",
        quanta=range(8, 26) if classical else range(8, 41),
        prescaler=range(1, 1025),
        limits=CLASSICAL_LIMITS if classical else FD_NOMINAL_LIMITS,
        sample_point=None,
        window=NOMINAL_WINDOW,
        basis="conditions I and II of the timing: ISO 11898-1; Hartwich & Bassemir, 1999",
    )
    if nominal.bitrate > CLASSICAL_MAX_BITRATE:
        phase_name = "classical CAN" if classical else "the nominal (arbitration) phase"
        raise fields.error(
            "bitrate",
            f"{_rate_label(nominal.bitrate)} is above 1 Mbit/s, the most {phase_name} allows",
        )
    requirements = [
        _phase_requirement(
            fields,
            name,
            nominal,
            label=_rate_label(nominal.bitrate) + ("" if classical else " nominal"),
            setting=f"{name}.{'bit' if classical else 'nominal'}_divisor",
            tolerance=nominal_tolerance,
            key="quanta",
        )
    ]
    details = [("sample point wanted", _window_text(nominal))]
    if not classical:
        data = _read_phase(
            fields,
            "data_",
            quanta=range(5, 26),
            prescaler=range(1, 33),
            limits=FD_DATA_LIMITS,
            sample_point=DATA_SAMPLE_POINT,
            window=DATA_WINDOW,
            basis="ISO 11898-1:2015 data-phase condition SJW/(20·quanta) (from memory)",
        )
        if data.bitrate < nominal.bitrate:
            raise fields.error(
                "data_bitrate",
                f"{format_hz(data.bitrate)} is below the nominal {format_hz(nominal.bitrate)}; "
                "the data bit time may not be longer than the nominal one",
            )
        requirements.append(
            _phase_requirement(
                fields,
                name,
                data,
                label=_rate_label(data.bitrate) + " data",
                setting=f"{name}.data_divisor",
                tolerance=data_tolerance,
                key="data_quanta",
            )
        )
        details.append(("data sample point wanted", _window_text(data)))
        details.append(
            ("not applied", "ISO 11898-1:2015's two conditions mixing nominal and data phases")
        )
    return Peripheral(name, kind, clock, tuple(requirements), tuple(details))


def _rate_label(bitrate: Fraction) -> str:
    return format_hz(bitrate).replace("Hz", "bit/s")


def _window_text(phase: _Phase) -> str:
    low, high = phase.sample_point - phase.window, phase.sample_point + phase.window
    return (
        f"{float(phase.sample_point) * 100:.4g} % "
        f"({float(low) * 100:.4g} .. {float(high) * 100:.4g} %)"
    )
