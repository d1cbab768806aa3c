"""``clockplan bench``: the tables, JSON, bad options and the loud mismatch (no timing checks)."""

from __future__ import annotations

import json
from contextlib import redirect_stdout

import pytest

import clockplan.bench as bench
from clockplan.brute import Enumeration
from clockplan.cli import main
from clockplan.errors import InputError
from clockplan.scenario import parse_scenario
from clockplan.solve import search
from tests.conftest import scenario_from


@pytest.fixture(scope="module")
def small_run(tmp_path_factory):
    """One real run of the small case (3 searches, 3 processes, a child, the enumerator)."""
    output = tmp_path_factory.mktemp("bench") / "out.json"
    with output.open("w") as stream, redirect_stdout(stream):
        status = main(["bench", "--cases", "small", "--runs", "3", "--cap", "5", "--json"])
    return status, json.loads(output.read_text())


def test_small_case_prints_both_tables(capsys):
    status = main(["bench", "--cases", "small", "--runs", "3", "--cap", "5"])
    out = capsys.readouterr().out
    assert status == 0
    assert "cores" in out and "OR-Tools" in out and "Python" in out
    for label in ("Search", "Brute-force enumerator", "small", "optimal", "equal", "MiB"):
        assert label in out
    assert "MISMATCH" not in out


def test_json_holds_every_figure_and_the_optima_agree(small_run):
    status, data = small_run
    assert status == 0
    assert data["machine"]["cores"] >= 1 and data["runs"] == 3
    (case,) = data["cases"]
    assert case["name"] == "small" and case["status"] == "optimal"
    assert len(case["solve_s"]) == len(case["process_s"]) == 3
    assert case["peak_rss_bytes"] > 10 * 2**20
    enumerator = case["enumerator"]
    assert enumerator["finished"] and enumerator["best_key"] == case["optimum_key"]
    assert int(case["raw_combinations"]) > int(enumerator["total"]) > 0
    assert case["mismatch"] is None


@pytest.mark.parametrize(
    ("arguments", "named"),
    [
        (["--runs", "2"], "--runs"),
        (["--cap", "0"], "--cap"),
        (["--cases", "tiny"], "--cases"),
        (["--cases", ","], "--cases"),
    ],
)
def test_bad_options_are_one_line_and_exit_2(capsys, arguments, named):
    assert main(["bench", *arguments]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith(f"clockplan: {named}:") and "\n" not in err


def test_every_case_file_is_found_tiers_first():
    names = list(bench.case_files(bench.bench_directory()))
    assert names[:3] == ["small", "medium", "hard"]
    assert "enumerable" in names


def test_outside_the_repository_the_error_says_where_to_run(monkeypatch, tmp_path):
    monkeypatch.setattr(bench, "__file__", str(tmp_path / "site" / "clockplan" / "bench.py"))
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError, match="scenarios/bench/"):
        bench.bench_directory()


def _enumeration(best_key: int | None, *, finished: bool = True) -> Enumeration:
    return Enumeration(finished, best_key, None, 10, 10 if finished else 100, 1.0, 1.0)


@pytest.fixture(scope="module")
def solved():
    scenario = scenario_from("""
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz", "11.0592 MHz"]
        [dividers.bus]
        from = "main"
        divide = "1..8"
        [peripherals.console]
        kind = "uart"
        from = "bus"
        baud = [115200]
        divisor = "1..64"
    """)
    result = search(scenario, top=1)
    assert result.plans
    return result


def test_equal_optima_pass_and_a_different_one_is_a_mismatch(solved):
    key = solved.plans[0].worst_steps
    assert bench.compare_optima([solved], _enumeration(key)) is None
    assert "enumerator's optimum" in bench.compare_optima([solved], _enumeration(key + 1))
    assert "no feasible plan" in bench.compare_optima([solved], _enumeration(None))


def test_a_capped_enumerator_only_mismatches_when_it_beats_a_proof(solved):
    key = solved.plans[0].worst_steps
    assert bench.compare_optima([solved], _enumeration(key + 5, finished=False)) is None
    assert "below the solver's proven" in bench.compare_optima(
        [solved], _enumeration(key - 1, finished=False)
    )


def test_a_mismatch_exits_1_loudly(monkeypatch, capsys):
    def wrong(scenario, precisions, *, cap):
        return _enumeration(1)  # no board in the benchmark reaches key 1 (0.01 %)

    monkeypatch.setattr(bench, "enumerate_plans", wrong)
    monkeypatch.setattr(bench, "_time_plan_process", lambda path: 0.0)
    monkeypatch.setattr(bench, "peak_search_memory", lambda path: 0)
    assert main(["bench", "--cases", "small", "--runs", "3", "--cap", "1"]) == 1
    out = capsys.readouterr().out
    assert "MISMATCH in small" in out


def test_the_scaling_boards_parse_and_grow_along_their_dimension():
    sizes = {}
    for dimension, point in bench.scaling_variants():
        parsed = parse_scenario(bench.scaling_scenario(point), "scaling.toml")
        assert len(parsed.peripherals) == point.peripherals
        assert len(parsed.plls) == point.plls
        assert len(parsed.source("main").candidates) == point.candidates
        assert {pll.fraction_bits for pll in parsed.plls} == {point.fraction_bits}
        sizes.setdefault(dimension, []).append(bench.raw_combinations(parsed))
    for dimension, counts in sizes.items():
        assert counts == sorted(counts), dimension
