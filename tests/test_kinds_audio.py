"""Audio (I2S/TDM): sampling frequencies, master and bit clocks, allowances, plans end to end."""

from fractions import Fraction

import pytest

from clockplan.errors import ScenarioError
from clockplan.peripherals.audio import FAMILIES, MASTER_RATIOS, QUALITIES, family
from clockplan.solve import Status, search
from tests.helpers import assert_plans_recheck, scenario_from
from tests.oracle import best_key

# Source: AES5 (preferred sampling frequencies; from memory, its text was not read): 48 kHz
# for professional use, 44.1 kHz consumer-related, 32 kHz transmission, and their multiples.
AES5_48K = [32_000, 48_000, 96_000, 192_000]
AES5_44K = [44_100, 88_200, 176_400]


@pytest.mark.parametrize("rate", AES5_48K)
def test_48_khz_family(rate):
    assert rate in FAMILIES["48 kHz"]
    assert family(Fraction(rate)) == "48 kHz"


@pytest.mark.parametrize("rate", AES5_44K)
def test_44_1_khz_family(rate):
    assert rate in FAMILIES["44.1 kHz"]
    assert family(Fraction(rate)) == "44.1 kHz"


def test_a_rate_outside_both_families():
    assert family(Fraction(44_100_000, 1001)) == "other"  # the NTSC-related 44.056 kHz


def test_a_48_khz_crystal_misses_44_1_khz_by_the_family_ratio():
    # Arithmetic: 44 100 / 48 000 = 147/160 (gcd 300). A 12.288 MHz crystal (256 × 48 kHz)
    # with whole master dividers gives 48 kHz exactly, and its nearest 44.1 kHz is 48 kHz
    # itself (÷1; ÷2 gives 24 kHz): 160/147 − 1 = +8.84 %.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["12.288 MHz"]
        [peripherals.codec]
        kind = "audio"
        from = "main"
        sample_rates = ["48 kHz", "44.1 kHz"]
        divide = "1..4"
        allowance = "10 %"
    """)
    checks = search(scenario, top=1).plans[0].evaluation.checks
    assert [check.achieved for check in checks] == [48_000, 48_000]
    assert [check.error for check in checks] == [0, Fraction(160, 147) - 1]


def test_studio_allowance_is_itu_r_bs_646():
    # Source: ITU-R BS.646 (formerly CCIR Rec. 646): a free-running sampling frequency within
    # ±1×10⁻⁵, i.e. ±10 ppm.
    assert QUALITIES["studio"][0] == Fraction(1, 10**5)
    assert QUALITIES["consumer"][0] == Fraction(1, 1000)  # common practice, no source


@pytest.mark.parametrize(
    ("fs", "ratio", "master"),
    [
        # Source: audio codec datasheets' master-clock tables: 256 fs and 512 fs.
        (48_000, 256, 12_288_000),
        (44_100, 256, 11_289_600),
        (48_000, 512, 24_576_000),
        (44_100, 512, 22_579_200),
        (32_000, 384, 12_288_000),
    ],
)
def test_master_clock_crystals_give_exact_sampling_frequencies(fs, ratio, master):
    assert ratio in MASTER_RATIOS
    scenario = scenario_from(f"""
        [sources.main]
        kind = "crystal"
        choose = ["{master} Hz"]
        [peripherals.codec]
        kind = "audio"
        from = "main"
        sample_rates = ["{fs} Hz"]
        master_clock = {ratio}
        divide = "1..4"
    """)
    best = search(scenario, top=1).plans[0]
    (check,) = best.evaluation.checks
    assert check.achieved == fs
    assert check.divisor == ratio  # master divider 1, register value divisor / ratio
    assert check.option.factor == ratio


def test_one_requirement_per_sample_rate_with_its_own_setting():
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["12 MHz"]
        [peripherals.i2s]
        kind = "audio"
        from = "main"
        sample_rates = ["48 kHz", "44.1 kHz"]
        slots = 8
        slot_bits = 32
        quality = "studio"
    """)
    (peripheral,) = scenario.peripherals
    assert [r.setting for r in peripheral.requirements] == [
        "i2s.master_divide_48000",
        "i2s.master_divide_44100",
    ]
    assert all(r.allowance == Fraction(1, 10**5) for r in peripheral.requirements)
    assert ("bit clock", "256 fs (8 slots × 32 bits), master ÷ 1") in peripheral.details


def test_both_families_from_one_audio_pll_match_the_oracle():
    # A small tree the oracle can walk: the PLL's VCO must serve 48 kHz and 44.1 kHz at once.
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["12 MHz", "12.288 MHz", "11.2896 MHz"]
        [plls.audio]
        from = "main"
        reference_divider = "1..2"
        pfd = "5 MHz .. 13 MHz"
        multiplier = "16..18"
        vco = "150 MHz .. 220 MHz"
        [peripherals.speaker]
        kind = "audio"
        from = "audio"
        sample_rates = ["48 kHz", "44.1 kHz"]
        master_clock = 128
        divide = "20..40"
        allowance = "2000 ppm"
    """)
    result = search(scenario, top=3)
    assert result.status is Status.OPTIMAL
    assert best_key(scenario, result.precision)[0] == result.plans[0].worst_steps
    assert_plans_recheck(scenario, result)


@pytest.mark.parametrize(
    ("extra", "key", "words"),
    [
        ("master_clock = 256\nslot_bits = 24\n", "a.master_clock", "48 fs by a whole number"),
        ("master_clock = 100\n", "a.master_clock", "is not one of"),
        ('quality = "studo"\n', "a.quality", "did you mean 'studio'"),
        ("sample_rates = []\n", "a.sample_rates", "empty list"),
    ],
)
def test_bad_audio_keys_are_located(extra, key, words):
    text = (
        '[sources.main]\nkind = "crystal"\nchoose = ["12 MHz"]\n'
        '[peripherals.a]\nkind = "audio"\nfrom = "main"\n'
    )
    if "sample_rates" not in extra:
        text += 'sample_rates = ["48 kHz"]\n'
    with pytest.raises(ScenarioError, match=words) as caught:
        scenario_from(text + extra)
    assert key in str(caught.value)
