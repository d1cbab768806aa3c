"""Every bundled board gives the same plans with one worker and with eight, every stage proved.

The time limit is generous so that a loaded machine only makes the test slower: a stage
the limit cut would fail the "proved" check, never pass by luck.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from clockplan.result import Status
from clockplan.scenario import load_scenario
from clockplan.solve import search

BOARDS = sorted((Path(__file__).parent.parent / "scenarios").rglob("*.toml"))


def _ranks(path: Path, workers: int) -> list[tuple[dict, dict]]:
    result = search(load_scenario(path), top=2, workers=workers, time_limit=1200)
    assert result.status in (Status.OPTIMAL, Status.INFEASIBLE), result.status
    assert not result.time_limited
    for ranked in result.plans:
        assert ranked.unproved == (), f"rank {ranked.rank}: {ranked.unproved} not proved"
    return [(dict(r.plan.sources), dict(r.plan.settings)) for r in result.plans]


def test_every_bundled_board_is_found():
    assert len(BOARDS) >= 10


@pytest.mark.parametrize("path", BOARDS, ids=lambda path: path.stem)
def test_one_worker_and_eight_give_the_same_plans(path):
    assert _ranks(path, 1) == _ranks(path, 8)
