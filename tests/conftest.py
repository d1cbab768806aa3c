"""Shared fixtures: small scenarios written inline and the bundled default."""

from __future__ import annotations

import textwrap

import pytest

from clockplan.evaluate import Evaluation, evaluate_plan
from clockplan.scenario import Scenario, default_scenario_path, load_scenario, parse_scenario
from clockplan.solve import SearchResult


def scenario_from(text: str, name: str = "inline.toml") -> Scenario:
    """Parse a scenario written inline in a test."""
    return parse_scenario(textwrap.dedent(text), name)


@pytest.fixture(scope="session")
def default_scenario() -> Scenario:
    return load_scenario(default_scenario_path())


def assert_plans_recheck(scenario: Scenario, result: SearchResult) -> list[Evaluation]:
    """Re-evaluate every ranked plan independently: no broken limit, every rate inside."""
    evaluations = [evaluate_plan(scenario, ranked.plan) for ranked in result.plans]
    for evaluation in evaluations:
        assert evaluation.violations == ()
        assert evaluation.feasible
    return evaluations
