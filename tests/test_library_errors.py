"""The library raises only clockplan's own errors, each also the matching builtin.

Wrong argument types, wrong TOML types anywhere in a document, a scenario without
sources and a peripheral fed by an unknown clock, whether read from text or built by
hand, all end in a :class:`~clockplan.errors.ClockplanError` naming what is wrong.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan import errors
from clockplan.errors import ArgumentTypeError, ClockplanError, ScenarioError
from clockplan.quantities import QuantityError
from clockplan.scenario import default_scenario_path, load_scenario, parse_scenario


@pytest.mark.parametrize(
    ("error", "builtin"),
    [
        (ScenarioError, ValueError),
        (errors.InputError, ValueError),
        (QuantityError, ValueError),
        (errors.ModelTooLargeError, OverflowError),
        (ArgumentTypeError, TypeError),
    ],
)
def test_every_error_class_is_a_clockplan_error_and_its_builtin(error, builtin):
    assert issubclass(error, ClockplanError)
    assert issubclass(error, builtin)


@pytest.mark.parametrize("value", [None, 5, b"title = 'x'", ["a.toml"], {"title": "x"}])
def test_wrong_argument_types_are_argument_type_errors(value):
    with pytest.raises(ArgumentTypeError, match="expected"):
        load_scenario(value)
    with pytest.raises(ArgumentTypeError, match="expected the TOML text as a str"):
        parse_scenario(value)


def test_a_file_name_of_the_wrong_type_is_an_argument_type_error():
    with pytest.raises(ArgumentTypeError, match="file must be a str"):
        parse_scenario("title = 'x'", Path("x.toml"))  # type: ignore[arg-type]


def bundled():
    return load_scenario(default_scenario_path())


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda s: {"sources": ()}, "sources: is empty"),
        (lambda s: {"sources": None}, "sources: expected a tuple"),
        (lambda s: {"peripherals": list(s.peripherals)}, "peripherals: expected a tuple"),
        (lambda s: {"plls": ("system",)}, "plls: expected Pll entries, got str"),
        (lambda s: {"title": 5}, "title: expected str, got int"),
        (lambda s: {"conditions": None}, "conditions: expected Conditions"),
        (lambda s: {"rank_by": "cost"}, "rank_by: expected tuple, got str"),
        (lambda s: {"rank_by": ("cost",)}, "rank_by: expected each of worst-share, cost"),
        (
            lambda s: {"peripherals": (replace(s.peripherals[0], clock="nowhere"),)},
            "peripherals.usb.from: 'nowhere' is not a clock of this scenario",
        ),
        (
            lambda s: {"sources": (replace(s.sources[0], candidates=()), *s.sources[1:])},
            "sources.main.choose: offers no frequency",
        ),
    ],
)
def test_a_scenario_built_by_hand_is_checked_like_a_file(change, message):
    scenario = bundled()
    with pytest.raises(ScenarioError, match=message):
        replace(scenario, **change(scenario))


json_like = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=8),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner),
    max_leaves=6,
)


@settings(max_examples=150, deadline=None, database=None, derandomize=True)
@given(json_like, json_like)
def test_any_python_value_as_text_or_file_name_is_a_clockplan_error(text, file):
    for call in (lambda: parse_scenario(text, file), lambda: load_scenario(text)):
        try:
            call()
        except ClockplanError:
            pass
