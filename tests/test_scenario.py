from fractions import Fraction

import pytest

from clockplan.errors import ScenarioError
from clockplan.scenario import load_scenario
from tests.helpers import board_text, scenario_from

BASE = board_text("usb")


def test_default_scenario_reads(default_scenario):
    assert default_scenario.title == "Weather-station hub, rev A"
    assert [s.name for s in default_scenario.sources] == ["main", "slow"]
    console = next(p for p in default_scenario.peripherals if p.name == "console")
    assert [r.target for r in console.requirements] == [115200, 9600]


def test_base_scenario_reads():
    scenario = scenario_from(BASE)
    assert scenario.plls[0].pfd == (Fraction(10**6), Fraction(2 * 10**6))
    assert scenario.source("main").budget == Fraction(20 + 30 + 15, 10**6)  # 3 ppm/year × 5 years


@pytest.mark.parametrize(
    ("change", "key", "message"),
    [
        (('choose = ["12 MHz"]', 'choose = ["12"]'), "sources.main.choose", "has no unit"),
        (('choose = ["12 MHz"]', 'choose = ["-12 MHz"]'), "sources.main.choose", "positive"),
        (('choose = ["12 MHz"]', "choose = []"), "sources.main.choose", "empty"),
        (('kind = "crystal"', 'kind = "quartz"'), "sources.main.kind", "not one of"),
        (
            ('reference_divider = "1..12"', 'reference_divider = "12..1"'),
            "plls.system.reference_divider",
            "backwards",
        ),
        (('pfd = "1 MHz .. 2 MHz"', 'pfd = "2 MHz .. 1 MHz"'), "plls.system.pfd", "backwards"),
        (('multiplier = "50..200"', 'multiplyer = "50..200"'), "plls.system.multiplier", "missing"),
        (
            ('divide = "2..8"', 'divide = "2..8"\ndivde = 3'),
            "dividers.usb_clock.divde",
            "did you mean 'divide'",
        ),
        (
            ('from = "usb_clock"', 'from = "usb_clok"'),
            "peripherals.usb.from",
            "did you mean 'usb_clock'",
        ),
        (
            ('kind = "usb-full-speed"', 'kind = "usb-fullspeed"'),
            "peripherals.usb.kind",
            "did you mean 'usb-full-speed'",
        ),
        (('title = "USB board"', "title = 5"), "title", "expected a string"),
        (('title = "USB board"', 'title = "x"\n[extra]\na = 1'), "extra", "not a known key"),
    ],
)
def test_mistakes_name_the_key(change, key, message):
    old, new = change
    assert old in BASE
    with pytest.raises(ScenarioError, match=message) as caught:
        scenario_from(BASE.replace(old, new, 1))
    assert caught.value.key == key
    assert str(caught.value).startswith(f"inline.toml: {key}: ")


def test_missing_file_is_a_scenario_error(tmp_path):
    with pytest.raises(ScenarioError, match="no such file"):
        load_scenario(tmp_path / "nope.toml")


def test_bad_toml_is_a_scenario_error():
    with pytest.raises(ScenarioError, match="not valid TOML"):
        scenario_from("title = \n")


def test_stepped_range_of_candidates():
    text = BASE.replace(
        'choose = ["12 MHz"]', 'choose = { from = "1 MHz", to = "2 MHz", step = "250 kHz" }'
    )
    assert scenario_from(text).source("main").candidates == tuple(
        Fraction(v) for v in (1_000_000, 1_250_000, 1_500_000, 1_750_000, 2_000_000)
    )


def test_names_are_unique_across_sections():
    text = BASE + '\n[dividers.usb]\nfrom = "system"\ndivide = 2\n'
    with pytest.raises(ScenarioError, match="already used"):
        scenario_from(text)
