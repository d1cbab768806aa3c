"""Shared fixtures: small scenarios written inline and the bundled default."""

from __future__ import annotations

import textwrap

import pytest

from clockplan.scenario import Scenario, default_scenario_path, load_scenario, parse_scenario


def scenario_from(text: str, name: str = "inline.toml") -> Scenario:
    """Parse a scenario written inline in a test."""
    return parse_scenario(textwrap.dedent(text), name)


@pytest.fixture(scope="session")
def default_scenario() -> Scenario:
    return load_scenario(default_scenario_path())
