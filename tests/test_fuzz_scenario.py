"""Fuzzing the scenario loader: whatever the text, a Scenario or one located ScenarioError.

(a) random documents: scenario-shaped tables of random keys and values, serialised to
TOML here (no extra dependency), raw random text, and valid files with lines broken;
(b) valid scenarios with one value, at a random key path, replaced by a random value of
a random type (or removed); when such a scenario still loads, building its CP-SAT model
either works or raises a ClockplanError (ModelTooLargeError included), nothing else.
"""

from __future__ import annotations

import datetime
import math
import re
import tomllib

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clockplan.errors import ClockplanError, ScenarioError
from clockplan.peripherals import READERS
from clockplan.scenario import Scenario, default_scenario_path, parse_scenario
from clockplan.solve.model import build_model
from clockplan.sources import SOURCE_KINDS

FILE = "fuzz.toml"

FUZZ = settings(
    max_examples=400,
    deadline=None,
    database=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)

# -- TOML text from Python values ------------------------------------------------------------

_BARE = re.compile(r"[A-Za-z0-9_-]+")


def toml_key(key: str) -> str:
    """A key as TOML writes it: bare when it can be, else a quoted basic string."""
    return key if _BARE.fullmatch(key) else toml_string(key)


def toml_string(text: str) -> str:
    """A TOML basic string holding ``text`` exactly."""
    escaped = text.replace("\\", "\\\\").replace('"', '\\"')
    return '"' + re.sub(r"[\x00-\x1f\x7f]", lambda m: f"\\u{ord(m.group()):04x}", escaped) + '"'


def toml_value(value: object) -> str:
    """One value in TOML's inline syntax."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return toml_string(value)
    if isinstance(value, (datetime.date, datetime.time)):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(item) for item in value) + "]"
    if isinstance(value, dict):
        pairs = (f"{toml_key(key)} = {toml_value(item)}" for key, item in value.items())
        return "{" + ", ".join(pairs) + "}"
    raise TypeError(f"no TOML form for {value!r}")


def toml_document(table: dict[str, object], path: tuple[str, ...] = ()) -> str:
    """A whole document: plain values first, then one ``[header]`` per sub-table."""
    lines = [f"[{'.'.join(toml_key(key) for key in path)}]"] if path else []
    lines += [
        f"{toml_key(key)} = {toml_value(value)}"
        for key, value in table.items()
        if not isinstance(value, dict)
    ]
    text = "\n".join(lines) + "\n"
    for key, value in table.items():
        if isinstance(value, dict):
            text += "\n" + toml_document(value, (*path, key))
    return text


def test_the_serialiser_round_trips():
    table = {"a b": [1, 2.5, "x\ny"], "t": {"q": True, "r": {"s": float("inf")}}, "u": {}}
    assert tomllib.loads(toml_document(table)) == table


# -- random values ---------------------------------------------------------------------------

WORDS = (
    [*READERS, *SOURCE_KINDS, "catalog", "fastest", "none", "even", "main", "system", "core"]
    + ["bus", "usb_clock", "slow", "12 MHz", "32.768 kHz", "1 MHz .. 4 MHz", "1..16", "pow2 15"]
    + ["pow2 0..4", "20 ppm", "0.5 %", "-20..70", "1 Hz", "48 MHz", "2..8", "8..2", ""]
)
KEYS = (
    ["title", "conditions", "temperature", "years", "sources", "plls", "dividers", "muxes"]
    + ["peripherals", "kind", "choose", "tolerance", "stability", "aging", "from", "to", "step"]
    + ["reference_divider", "pfd", "multiplier", "fraction_bits", "vco", "divide", "min", "max"]
    + ["goal", "rate", "allowance", "chain", "baud", "oversampling", "divisor", "data_bits"]
    + ["parity", "stop_bits", "main", "system", "core", "bus", "usb_clock", "slow", "usb"]
)
UNITS = ["Hz", "kHz", "MHz", "GHz", "mHz", "ppm", "ppb", "%", "pF", "", "Mhz", "THz"]

numbers = st.one_of(
    st.integers(),
    st.integers(min_value=-10, max_value=10**7),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, 1, 2**62, 2**63 - 1, -(2**63), 10**30, 1e300, 5e-324]),
)
number_text = st.one_of(
    numbers.map(str),
    st.from_regex(r"[+-]?\d{1,4}(\.\d{0,4})?([eE][+-]?\d{1,4})?", fullmatch=True),
)
quantities = st.builds(lambda n, u: f"{n} {u}".strip(), number_text, st.sampled_from(UNITS))
ranges = st.builds(
    lambda low, high, pow2: f"{'pow2 ' if pow2 else ''}{low}..{high}",
    number_text,
    st.one_of(number_text, quantities),
    st.booleans(),
)
scalars = st.one_of(
    numbers,
    st.booleans(),
    st.sampled_from(WORDS),
    quantities,
    ranges,
    st.text(max_size=12),
    st.dates(),
    st.times(),
)
values = st.recursive(
    scalars,
    lambda inner: (
        st.lists(inner, max_size=4)
        | st.dictionaries(st.sampled_from(KEYS) | st.text(max_size=6), inner, max_size=4)
    ),
    max_leaves=5,
)
# Well-formed but extreme values: these pass the loader more often and reach the model.
decimals = st.one_of(
    st.integers(0, 10**13).map(str),
    st.decimals(min_value=0, max_value=10**13, places=6, allow_nan=False).map(str),
)
frequencies = st.builds(
    lambda number, unit: f"{number} {unit}", decimals, st.sampled_from(["Hz", "kHz", "MHz", "GHz"])
)
whole = st.integers(0, 2**64)
plausible = st.one_of(
    frequencies,
    st.builds(lambda low, high: f"{low} .. {high}", frequencies, frequencies),
    st.builds(lambda low, high: f"{low}..{high}", whole, whole),
    st.builds(lambda low, high: f"pow2 {low}..{high}", st.integers(0, 70), st.integers(0, 70)),
    st.builds(lambda number, unit: f"{number} {unit}", decimals, st.sampled_from(["ppm", "%"])),
    whole,
    st.lists(whole, min_size=1, max_size=5),
    st.lists(frequencies, min_size=1, max_size=5),
)
keys = st.one_of(st.sampled_from(KEYS), st.text(min_size=1, max_size=8))
names = st.one_of(st.sampled_from(KEYS[-6:]), st.text(min_size=1, max_size=6))
items = st.dictionaries(keys, values, max_size=5)
sections = st.dictionaries(names, items, max_size=2)
documents = st.fixed_dictionaries(
    {},
    optional={
        "title": scalars,
        "conditions": items,
        "sources": sections,
        "plls": sections,
        "dividers": sections,
        "muxes": sections,
        "peripherals": sections,
        "extra": scalars,
    },
)


# -- the property ----------------------------------------------------------------------------


def load_or_refuse(text: str) -> Scenario | None:
    """Parse ``text``; a refusal must be a ScenarioError that is one line naming the file."""
    try:
        return parse_scenario(text, FILE)
    except ScenarioError as error:
        message = str(error)
        assert message.startswith(f"{FILE}: ")
        assert len(message.splitlines()) == 1, message
        return None


def model_or_refuse(scenario: Scenario) -> None:
    """Build the model; the only acceptable failure is a ClockplanError."""
    try:
        build_model(scenario)
    except ClockplanError as error:
        assert len(str(error).splitlines()) == 1, str(error)


# -- (a) random documents --------------------------------------------------------------------


@FUZZ
@given(documents)
def test_random_scenario_shaped_documents(document):
    load_or_refuse(toml_document(document))


@settings(FUZZ, max_examples=300)
@given(st.text(max_size=200))
def test_random_text(text):
    load_or_refuse(text)


DEFAULT_TEXT = default_scenario_path().read_text(encoding="utf-8")


@settings(FUZZ, max_examples=300)
@given(st.data())
def test_valid_files_with_a_line_broken(data):
    lines = DEFAULT_TEXT.splitlines()
    index = data.draw(st.integers(0, len(lines) - 1))
    cut = data.draw(st.integers(0, len(lines[index])))
    inserted = data.draw(st.text(max_size=8))
    lines[index] = lines[index][:cut] + inserted + lines[index][cut:]
    load_or_refuse("\n".join(lines))


# -- (b) one value substituted into valid scenarios -------------------------------------------

BENCH_BOARD = """
title = "Fuzz bench board"
[conditions]
temperature = "-40..85"
years = 10
[sources.main]
kind = "crystal"
choose = ["12 MHz", "16 MHz", "25 MHz"]
tolerance = "20 ppm"
[sources.slow]
kind = "tuning-fork"
choose = ["32.768 kHz"]
[plls.system]
from = "main"
reference_divider = "1..8"
pfd = "1 MHz .. 4 MHz"
multiplier = "16..200"
vco = "96 MHz .. 400 MHz"
[dividers.core]
from = "system"
divide = [2, 4, 6, 8]
max = "120 MHz"
goal = "fastest"
[dividers.usb_clock]
from = "system"
divide = "2..10"
[dividers.bus]
from = "core"
divide = "pow2 0..4"
max = "60 MHz"
[muxes.timer_clock]
from = ["bus", "main"]
max = "60 MHz"
[peripherals.usb]
kind = "usb-full-speed"
from = "usb_clock"
[peripherals.console]
kind = "uart"
from = "bus"
baud = [115200, 9600]
divisor = "1..4095"
fraction_bits = 4
parity = "even"
[peripherals.clock_tick]
kind = "tick"
from = "slow"
chain = "pow2 15"
allowance = "300 ppm"
[peripherals.sensor]
kind = "clock"
from = "timer_clock"
rate = "1 MHz"
divide = "1..64"
allowance = "1 %"
"""

RADIO_BOARD = """
title = "Fuzz radio board"
[sources.reference]
kind = "tcxo"
choose = { from = "10 MHz", to = "40 MHz", step = "1 MHz" }
[sources.backup]
kind = "internal-rc"
choose = "8 MHz"
[plls.synth]
from = "reference"
reference_divider = [1, 2, 4]
multiplier = "8..64"
fraction_bits = 8
vco = "200 MHz .. 600 MHz"
register = { reference_divider = { 1 = 0, 2 = 1, 4 = 2 }, multiplier = "minus-one" }
[dividers.radio_clock]
from = "synth"
divide = "1..16"
min = "20 MHz"
max = "60 MHz"
register = { divide = "minus-one" }
[muxes.system]
from = ["radio_clock", "backup"]
register = { input = "value" }
[peripherals.radio]
kind = "clock"
from = "radio_clock"
rate = "26 MHz"
allowance = "10 ppm"
[peripherals.debug]
kind = "uart"
from = "system"
baud = 1000000
oversampling = 8
divisor = [1, 2, 3, 4, 5, 6, 7, 8]
register = { divisor = "minus-one" }
"""

BUS_BOARD = """
title = "Fuzz bus board"
[sources.main]
kind = "tcxo"
choose = ["8 MHz", "12 MHz", "25 MHz"]
[sources.audio_reference]
kind = "tcxo"
choose = ["12.288 MHz", "24.576 MHz"]
[plls.system]
from = "main"
reference_divider = "1..8"
pfd = "1 MHz .. 8 MHz"
multiplier = "8..100"
vco = "100 MHz .. 500 MHz"
[dividers.bus]
from = "system"
divide = "1..8"
max = "100 MHz"
[peripherals.flash]
kind = "spi"
from = "bus"
max = "20 MHz"
[peripherals.sensors]
kind = "i2c"
from = "bus"
mode = "fast"
[peripherals.field_bus]
kind = "can"
from = "bus"
bitrate = 500000
register = { prescaler = "minus-one", sjw = "minus-one" }
[peripherals.scheduler]
kind = "timer"
from = "bus"
rate = "1 kHz"
prescaler = "pow2 0..10"
register = { prescaler = "log2", reload = "minus-one" }
[peripherals.speaker]
kind = "audio"
from = "audio_reference"
sample_rates = ["48 kHz"]
[peripherals.network]
kind = "ethernet-rmii"
from = "system"
divide = "1..10"
"""

BASES = [tomllib.loads(text) for text in (DEFAULT_TEXT, BENCH_BOARD, RADIO_BOARD, BUS_BOARD)]


def key_paths(node: object, path: tuple[object, ...] = ()) -> list[tuple[object, ...]]:
    """Every key path (dict keys and list indices) below ``node``."""
    if isinstance(node, dict):
        children = node.items()
    elif isinstance(node, list):
        children = enumerate(node)
    else:
        return []
    found = []
    for key, child in children:
        found.append((*path, key))
        found += key_paths(child, (*path, key))
    return found


def substituted(document: dict, path: tuple[object, ...], value: object) -> dict:
    """A deep copy of ``document`` with the value at ``path`` replaced (removed for None)."""
    copy = tomllib.loads(toml_document(document))
    holder = copy
    for key in path[:-1]:
        holder = holder[key]
    if value is None and isinstance(holder, dict):
        del holder[path[-1]]
    else:
        holder[path[-1]] = [] if value is None else value
    return copy


@pytest.mark.parametrize("index", range(len(BASES)))
def test_the_bases_are_valid_and_build(index):
    # A base must load and build outright: a refusal here (even a ClockplanError, which the
    # fuzzing below accepts) means the fuzz bases no longer exercise the model builder.
    scenario = parse_scenario(toml_document(BASES[index]), FILE)
    assert scenario.peripherals
    build_model(scenario)


@FUZZ
@given(st.data())
def test_one_value_substituted(data):
    document = data.draw(st.sampled_from(BASES))
    path = data.draw(st.sampled_from(key_paths(document)))
    value = data.draw(st.none() | values | plausible)
    scenario = load_or_refuse(toml_document(substituted(document, path, value)))
    if scenario is not None:
        model_or_refuse(scenario)
