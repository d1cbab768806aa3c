import re
from fractions import Fraction

import pytest

from clockplan.quantities import (
    UNITS,
    QuantityError,
    exact_string,
    format_hz,
    parse_cycles,
    parse_exact_string,
    parse_frequency,
    parse_frequency_list,
    parse_frequency_range,
    parse_integer_choices,
    parse_quantity,
    parse_relative,
    parse_stages,
    parse_temperature_range,
    parse_whole,
)


@pytest.mark.parametrize(
    ("text", "hertz"),
    [
        ("11.0592 MHz", Fraction(11_059_200)),
        ("32.768 kHz", Fraction(32_768)),
        ("1 GHz", Fraction(10**9)),
        ("0.5 Hz", Fraction(1, 2)),
        ("12MHz", Fraction(12_000_000)),
        ("12 MHZ", Fraction(12_000_000)),
        ("12 khz", Fraction(12_000)),
        ("1e6 Hz", Fraction(10**6)),
        ("1 mHz", Fraction(1, 1000)),
        ("2.5 mHz", Fraction(1, 400)),
    ],
)
def test_frequencies_parse_exactly(text, hertz):
    assert parse_frequency(text) == hertz
    assert isinstance(parse_frequency(text), Fraction)


@pytest.mark.parametrize(
    ("text", "ratio"),
    [
        ("20 ppm", Fraction(20, 10**6)),
        ("0.5 %", Fraction(1, 200)),
        ("0.25%", Fraction(1, 400)),
        ("500 ppb", Fraction(1, 2_000_000)),
    ],
)
def test_relative_quantities_parse_exactly(text, ratio):
    assert parse_relative(text) == ratio


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("12", "has no unit"),
        ("12 mhz", 'write "MHz" for megahertz or "mHz" for millihertz'),
        ("12 mHZ", 'write "MHz" for megahertz or "mHz" for millihertz'),
        ("0.5 mHz", "between 1 mHz and 1 THz"),
        ("12 MHzz", "expected one of"),
        ("-3 MHz", "not a positive frequency"),
        ("0 Hz", "not a positive frequency"),
        ("twelve MHz", "is not a frequency"),
        (12, "has no unit"),
        ([1], "is not a frequency"),
    ],
)
def test_bad_frequencies_say_what_was_expected(text, message):
    with pytest.raises(QuantityError, match=message):
        parse_frequency(text)


@pytest.mark.parametrize(
    ("text", "named"),
    [
        ("\uff11\uff12 MHz", "U+FF11 FULLWIDTH DIGIT ONE"),
        ("\u0661\u0662 MHz", "U+0661 ARABIC-INDIC DIGIT ONE"),
        ("12\nMHz", "U+000A"),
        ("12\tMHz", "U+0009"),
        ("12\u00a0MHz", "U+00A0 NO-BREAK SPACE"),
        ("12\u202eMHz", "U+202E RIGHT-TO-LEFT OVERRIDE"),
    ],
)
def test_only_ascii_digits_and_spaces_make_a_quantity(text, named):
    with pytest.raises(QuantityError, match=re.escape(named)):
        parse_frequency(text)


def test_a_look_alike_letter_in_a_unit_is_named():
    with pytest.raises(QuantityError) as raised:
        parse_frequency("12 \u041cHz")  # a Cyrillic capital EM, not a Latin M
    assert "U+041C CYRILLIC CAPITAL LETTER EM is not a Latin letter" in str(raised.value)


def test_the_messages_quote_long_values_shortened_and_escaped():
    with pytest.raises(QuantityError) as raised:
        parse_frequency("\x1b]0;title\x07" + "9" * 10_000)
    message = str(raised.value)
    assert len(message) < 200
    assert "\x1b" not in message and "\\x1b" in message


def test_quantity_errors_are_clockplan_errors_and_value_errors():
    from clockplan.errors import ClockplanError

    assert issubclass(QuantityError, ClockplanError)
    assert issubclass(QuantityError, ValueError)


def test_negative_relative_is_refused():
    with pytest.raises(QuantityError, match="negative"):
        parse_relative("-20 ppm")


def test_a_plain_number_takes_the_bare_unit_when_one_is_given():
    assert parse_quantity(15, "capacitance", bare_unit="pF") == Fraction(15, 10**12)


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        ("1..4", range(1, 5)),
        ("pow2 0..3", (1, 2, 4, 8)),
        ("pow2 15", (32768,)),
        ([6, 2, 4, 2], (2, 4, 6)),
        (7, (7,)),
    ],
)
def test_integer_choices(value, expected):
    assert tuple(parse_integer_choices(value)) == tuple(expected)


@pytest.mark.parametrize(
    ("value", "message"),
    [
        ("9..3", "backwards"),
        ([], "empty"),
        ("pow2 70", "2\\*\\*62"),
        ("0..4", "below"),
        ("1..99999999", "at most"),
        ([1.5], "whole numbers"),
        (True, "not a whole number"),
    ],
)
def test_bad_integer_choices(value, message):
    with pytest.raises(QuantityError, match=message):
        parse_integer_choices(value)


def test_frequency_range_runs_low_to_high():
    assert parse_frequency_range("1 MHz .. 2 MHz") == (10**6, 2 * 10**6)
    with pytest.raises(QuantityError, match="backwards"):
        parse_frequency_range("2 MHz .. 1 MHz")


@pytest.mark.parametrize("value", [Fraction(48_000_000), Fraction(8_400_000, 73)])
def test_exact_strings_round_trip(value):
    assert parse_exact_string(exact_string(value)) == value


def test_exact_string_forms():
    assert exact_string(Fraction(48_000_000)) == "48000000"
    assert exact_string(Fraction(8_400_000, 73)) == "8400000/73"


def test_format_hz_picks_a_readable_unit():
    assert format_hz(11_059_200) == "11.0592 MHz"
    assert format_hz(32_768) == "32.768 kHz"
    assert format_hz(1) == "1 Hz"


@pytest.mark.parametrize(
    ("text", "dimension", "value"),
    [
        ("12 MHZ", "frequency", Fraction(12_000_000)),
        ("12 Mhz", "frequency", Fraction(12_000_000)),
        ("5 mHz", "frequency", Fraction(5, 1000)),
        ("48 KHZ", "frequency", Fraction(48_000)),
        ("44.1k", "frequency", Fraction(44_100)),
        ("12M", "frequency", Fraction(12_000_000)),
        ("18 PF", "capacitance", Fraction(18, 10**12)),
        ("4.7 KOHM", "resistance", Fraction(4_700)),
        ("1.5 Mohms", "resistance", Fraction(1_500_000)),
        ("17 mS", "transconductance", Fraction(17, 1000)),
        ("100 UW", "power", Fraction(1, 10**4)),
        ("20 PPM", "relative", Fraction(20, 10**6)),
        ("2 min", "time", Fraction(120)),
        ("25 °C", "temperature", Fraction(25)),
    ],
)
def test_one_unit_table_with_one_case_rule(text, dimension, value):
    assert parse_quantity(text, dimension) == value


@pytest.mark.parametrize(
    ("text", "dimension", "message"),
    [
        ("12 mhz", "frequency", 'write "MHz" for megahertz or "mHz" for millihertz'),
        ("12 mHZ", "frequency", 'write "MHz" for megahertz or "mHz" for millihertz'),
        ("4 mohm", "resistance", "has unit 'mohm'"),
        ("1 MW", "power", "has unit 'MW'"),
        ("1 MV", "voltage", "has unit 'MV'"),
        ("10 mA/v", "transconductance", "has unit 'mA/v'"),
        ("2 MIN", "time", "has unit 'MIN'"),
    ],
)
def test_the_prefixes_m_and_m_keep_their_case(text, dimension, message):
    with pytest.raises(QuantityError, match=re.escape(message)):
        parse_quantity(text, dimension)


def test_no_two_units_of_a_dimension_differ_only_where_case_is_folded():
    for dimension, table in UNITS.items():
        folded = [name.lower() for name in table if name[0] not in "mM"]
        assert len(folded) == len(set(folded)), dimension


def test_a_comma_separates_the_items_of_every_list():
    assert parse_integer_choices("1,2,4") == (1, 2, 4)
    assert parse_integer_choices("pow2 0..2, 10..12, 3") == (1, 2, 3, 4, 10, 11, 12)
    assert parse_frequency_list("8 MHz, 12 MHz,8MHz") == (8_000_000, 12_000_000)
    for text in ("1,,2", "1, ", ","):
        with pytest.raises(QuantityError, match="empty"):
            parse_integer_choices(text)


def test_a_bar_is_no_separator_and_says_so():
    with pytest.raises(QuantityError, match="uses a bar; separate alternatives with commas"):
        parse_integer_choices("1|8|64")


@pytest.mark.parametrize(
    ("text", "stages"),
    [
        ("pow2 15", [("pow2 15", (2**15,))]),
        ("128 x 256", [("128", (128,)), ("256", (256,))]),
        ("1,8,64 × 1..3", [("1,8,64", (1, 8, 64)), ("1..3", range(1, 4))]),
        ("1..2 X pow2 1", [("1..2", range(1, 3)), ("pow2 1", (2,))]),
        ("128,256", [("128,256", (128, 256))]),
    ],
)
def test_chain_stages_are_joined_by_x(text, stages):
    assert list(parse_stages(text)) == stages


@pytest.mark.parametrize("text", ["", "x 5", "5 x", "1..2 x  x 3", "5 ×"])
def test_a_chain_refuses_an_empty_stage(text):
    with pytest.raises(QuantityError, match="empty stage"):
        parse_stages(text)


@pytest.mark.parametrize(
    ("text", "message"),
    [("x", "not a whole number"), ("0", "less than 1"), ("1001", "more than 1000"), ("1.5", "not")],
)
def test_whole_numbers_for_options(text, message):
    assert parse_whole(" 12 ", minimum=1, maximum=1000) == 12
    with pytest.raises(QuantityError, match=message):
        parse_whole(text, minimum=1, maximum=1000)


@pytest.mark.parametrize(
    ("text", "cycles"),
    [
        ("2**20 cycles", 2**20),
        ("1048576 cycles", 2**20),
        ("1 cycle", 1),
        ("2**63 cycles", 2**62 + 1),
        ("2**99999999999999999999 cycles", 2**62 + 1),
        ("9" * 30 + " cycles", 2**62 + 1),
        ("32 s", None),
    ],
)
def test_cycle_counts_saturate_past_the_limit(text, cycles):
    assert parse_cycles(text, limit=2**62) == cycles


def test_temperature_ranges_share_the_range_grammar():
    assert parse_temperature_range("-20..70") == (-20, 70)
    assert parse_temperature_range("\u221240 °C .. 85 C") == (-40, 85)
    with pytest.raises(QuantityError, match="has unit 'CC'"):
        parse_temperature_range("-20CC..70")
