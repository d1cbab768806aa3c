"""Property tests: random small structures; every returned plan re-checks exactly."""

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clockplan.solve import Status, search
from tests.helpers import assert_plans_recheck, scenario_from
from tests.oracle import best_key

frequencies_mhz = st.lists(
    st.sampled_from([4, 6, 8, 10, 12, 16, 20, 24, 25]), min_size=1, max_size=3, unique=True
)


@st.composite
def small_scenarios(draw):
    crystals = draw(frequencies_mhz)
    low_m, span_m = draw(st.integers(1, 4)), draw(st.integers(0, 4))
    low_n, span_n = draw(st.integers(8, 40)), draw(st.integers(0, 20))
    pfd_low = draw(st.sampled_from([1, 2, 4]))
    vco_low = draw(st.sampled_from([48, 96, 120]))
    divides = draw(st.lists(st.integers(1, 12), min_size=1, max_size=4, unique=True))
    target_khz = draw(st.sampled_from([1000, 12000, 24000, 48000, 32768 // 8]))
    allowance = draw(st.sampled_from(["0.1 %", "0.5 %", "2 %"]))
    baud = draw(st.sampled_from([9600, 115200, 31250, 250000]))
    return f"""
        [sources.main]
        kind = "crystal"
        choose = [{", ".join(f'"{f} MHz"' for f in crystals)}]
        [plls.loop]
        from = "main"
        reference_divider = "{low_m}..{low_m + span_m}"
        pfd = "{pfd_low} MHz .. {pfd_low * 4} MHz"
        multiplier = "{low_n}..{low_n + span_n}"
        vco = "{vco_low} MHz .. {vco_low * 4} MHz"
        [dividers.out]
        from = "loop"
        divide = {sorted(divides)}
        max = "200 MHz"
        [peripherals.load]
        kind = "clock"
        from = "out"
        rate = "{target_khz} kHz"
        allowance = "{allowance}"
        [peripherals.serial]
        kind = "uart"
        from = "out"
        baud = [{baud}]
        divisor = "1..4096"
        fraction_bits = 2
    """


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_scenarios())
def test_returned_plans_satisfy_every_limit_when_re_evaluated(text):
    scenario = scenario_from(text)
    result = search(scenario, top=2, time_limit=20)
    assert_plans_recheck(scenario, result)
    if result.status is Status.INFEASIBLE:
        assert best_key(scenario, result.precisions) is None
