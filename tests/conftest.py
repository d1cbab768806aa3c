"""Shared fixtures: the bundled default scenario and its best plans set by hand.

Plain helpers (boards, hand-built plans, the in-process CLI) live in ``tests/helpers.py``.
"""

from __future__ import annotations

import pytest

from clockplan.result import SearchResult
from clockplan.scenario import Scenario, default_scenario_path, load_scenario
from tests.helpers import assert_plans_recheck, default_result, scenario_from

__all__ = ["assert_plans_recheck", "scenario_from"]
"""Still imported from here by test_brute.py and test_cli_bench.py, which move elsewhere."""


@pytest.fixture(scope="session")
def default_scenario() -> Scenario:
    return load_scenario(default_scenario_path())


@pytest.fixture(scope="session")
def default_best(default_scenario: Scenario) -> SearchResult:
    """The bundled board's two best plans, set by hand and evaluated (no search)."""
    return default_result(default_scenario)
