"""The searching commands run from a typed options value, built once from the command line."""

from __future__ import annotations

import dataclasses
import json
import time

import pytest

from clockplan.commands import check, diff, plan, show
from clockplan.commands._searching import SearchOptions
from tests.helpers import BOARDS, run_cli

BOARD = str(BOARDS / "bench.toml")


def _search(top: int) -> SearchOptions:
    return SearchOptions(BOARD, top, time_limit=60, workers=1, started=time.monotonic())


@pytest.mark.parametrize(
    ("argv", "call"),
    [
        (("plan", BOARD, "--json"), lambda: plan.plan(plan.PlanOptions(_search(5), json=True))),
        (
            ("check", BOARD, "--json"),
            lambda: check.check(check.CheckOptions(_search(1), json=True)),
        ),
        (
            ("show", BOARD, "--json", "--rank", "2"),
            lambda: show.show(
                show.ShowOptions(_search(5), rank=2, exports={}, force=False, json=True)
            ),
        ),
        (
            ("diff", BOARD, BOARD, "--json"),
            lambda: diff.diff(diff.DiffOptions(BOARD, BOARD, 1, 1, 60, 1, json=True)),
        ),
    ],
    ids=["plan", "check", "show", "diff"],
)
def test_a_command_called_with_its_options_says_what_its_command_line_says(capsys, argv, call):
    status, out, _ = run_cli(capsys, *argv, "--workers", "1")
    by_options = call()
    direct = capsys.readouterr().out
    assert by_options == status
    assert _without_times(json.loads(direct)) == _without_times(json.loads(out))


def _without_times(document: object) -> object:
    if isinstance(document, dict):
        return {k: _without_times(v) for k, v in document.items() if "elapsed" not in k}
    if isinstance(document, list):
        return [_without_times(item) for item in document]
    return document


def test_the_options_of_show_cannot_change_after_they_are_made():
    options = show.ShowOptions(
        _search(1), rank=1, exports={"svg": "a.svg"}, force=False, json=False
    )
    with pytest.raises(dataclasses.FrozenInstanceError):
        options.rank = 2  # type: ignore[misc]
    with pytest.raises(TypeError):
        options.exports["dot"] = "a.dot"  # type: ignore[index]
    assert options.inputs == (BOARD,)
