"""No rate of a proved plan can do better by changing only its own settings.

Random small boards are solved; for rank 1, every UART divisor and timer prescaler × reload
is compared with an exact scan written here from the peripherals' formulas (baud = input_clock /
(oversampling × divisor), rate = input_clock / (prescaler × reload); the usual baud-generator
and timer relations, common practice, no source), not from clockplan's.
"""

from __future__ import annotations

from fractions import Fraction

from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from clockplan.result import Status
from clockplan.solve import search
from tests.helpers import scenario_from

CRYSTALS = ("8 MHz", "12 MHz", "14.7456 MHz", "16 MHz", "25 MHz")
BAUDS = (9600, 19200, 115200, 230400, 460800)
TICKS = ("100 Hz", "1 kHz", "10 kHz", "44.1 kHz")
BUDGET = Fraction(65, 10**6)
"""The default crystal's budget: 20 + 30 ppm, plus 3 ppm a year for 5 years."""


def _worst(error: Fraction) -> Fraction:
    """(1 + e)(1 ± b) − 1 at its largest."""
    return abs(error) + BUDGET * (1 + error)


def _best_uart(input_clock: Fraction, baud: int, oversampling: int, bits: int) -> Fraction:
    scale = 2**bits
    return min(
        _worst(input_clock / (oversampling * Fraction(count, scale)) / baud - 1)
        for count in range(scale, 255 * scale + 1)
    )


def _best_timer(input_clock: Fraction, rate: Fraction) -> Fraction:
    best = None
    for prescaler in range(1, 65):
        ideal = input_clock / (prescaler * rate)
        for reload in {min(max(int(ideal) + step, 1), 4096) for step in (0, 1)}:
            worst = _worst(input_clock / (prescaler * reload) / rate - 1)
            best = worst if best is None or worst < best else best
    assert best is not None
    return best


@st.composite
def boards(draw: st.DrawFn) -> tuple[str, int, int]:
    crystal = draw(st.sampled_from(CRYSTALS))
    divide = draw(st.sampled_from(("1", "1..2", "1..4", "pow2 0..3")))
    bauds = draw(st.lists(st.sampled_from(BAUDS), min_size=1, max_size=2, unique=True))
    oversampling = draw(st.sampled_from((8, 16)))
    bits = draw(st.integers(0, 4))
    tick = draw(st.sampled_from(TICKS))
    text = f"""
        [sources.main]
        kind = "crystal"
        choose = ["{crystal}"]
        [dividers.bus]
        from = "main"
        divide = "{divide}"
        [peripherals.console]
        kind = "uart"
        from = "bus"
        baud = {sorted(bauds)}
        oversampling = {oversampling}
        fraction_bits = {bits}
        divisor = "1..255"
        [peripherals.tick]
        kind = "timer"
        from = "bus"
        rate = "{tick}"
        prescaler = "1..64"
        reload = "1..4096"
        allowance = "5 %"
    """
    return text, oversampling, bits


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(boards())
def test_no_rate_improves_by_changing_only_its_own_settings(board):
    text, oversampling, bits = board
    scenario = scenario_from(text)
    result = search(scenario, top=1, workers=1, time_limit=600)
    assume(result.plans)
    assert result.status is Status.OPTIMAL
    (best,) = result.plans
    for check in best.evaluation.checks:
        input_clock = check.input_clock
        if check.requirement.peripheral == "console":
            baud = int(check.requirement.target)
            assert check.worst_case == _best_uart(input_clock, baud, oversampling, bits)
        else:
            assert check.worst_case == _best_timer(input_clock, check.requirement.target)
