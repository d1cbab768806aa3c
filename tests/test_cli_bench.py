"""``clockplan bench``: the tables, JSON, bad options and the loud mismatch (no timing checks)."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from contextlib import redirect_stdout
from pathlib import Path

import pytest

import benchmarks.command as command
import benchmarks.measure as measure
from benchmarks.cases import bench_directory, case_files
from benchmarks.enumerator import Enumeration, raw_combinations
from benchmarks.scaling import scaling_scenario, scaling_variants
from clockplan.cli import main
from clockplan.scenario import parse_scenario
from clockplan.solve import search
from tests.conftest import scenario_from

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def small_run(tmp_path_factory):
    """The one real run of the small case (3 searches, 3 processes, a child, the enumerator),
    as JSON, with the measured case kept so that the tables can be printed from it."""
    output = tmp_path_factory.mktemp("bench") / "out.json"
    measured = []

    def keep(*args, **kwargs):
        measured.append(measure.run_case(*args, **kwargs))
        return measured[-1]

    with pytest.MonkeyPatch.context() as patch, output.open("w") as stream:
        patch.setattr(command, "run_case", keep)
        with redirect_stdout(stream):
            status = main(["bench", "--cases", "small", "--runs", "3", "--cap", "5", "--json"])
    (case,) = measured
    return status, json.loads(output.read_text()), case


def test_small_case_prints_both_tables(small_run, monkeypatch, capsys):
    *_, case = small_run
    monkeypatch.setattr(command, "run_case", lambda *args, **kwargs: case)
    monkeypatch.setattr(command, "import_floor", lambda runs: (case.process_median / 2,) * runs)
    status = main(["bench", "--cases", "small", "--runs", "3", "--cap", "5"])
    out = capsys.readouterr().out
    assert status == 0
    assert "cores" in out and "OR-Tools" in out and "Python" in out
    assert "× floor" in out and "2.0×" in out  # the process over a floor of half its time
    for label in ("Search", "Brute-force enumerator", "small", "optimal", "equal", "MiB"):
        assert label in out
    assert "MISMATCH" not in out


def test_json_holds_every_figure_and_the_optima_agree(small_run):
    status, data, _ = small_run
    assert status == 0
    assert data["machine"]["cores"] >= 1 and data["runs"] == 3
    (case,) = data["cases"]
    assert case["name"] == "small" and case["status"] == "optimal"
    assert len(case["solve_s"]) == len(case["process_s"]) == len(data["floor_s"]) == 3
    assert case["process_over_floor"] == case["process_median_s"] / data["floor_median_s"]
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
    names = list(case_files(bench_directory()))
    assert names[:3] == ["small", "medium", "hard"]
    assert "enumerable" in names


def test_installed_without_the_clone_it_says_where_to_run(tmp_path):
    # The package alone, as a wheel installs it: no benchmarks/ and no scenarios/ beside it.
    site = tmp_path / "site"
    shutil.copytree(
        ROOT / "clockplan", site / "clockplan", ignore=shutil.ignore_patterns("__pycache__")
    )
    finished = subprocess.run(
        [sys.executable, "-m", "clockplan", "bench"],
        cwd=tmp_path,
        env={**os.environ, "PYTHONPATH": str(site)},
        capture_output=True,
        text=True,
        check=False,
    )
    assert finished.returncode == 2
    assert finished.stdout == ""
    assert finished.stderr.count("\n") == 1 and "Traceback" not in finished.stderr
    assert finished.stderr.startswith("clockplan: bench: runs only from a clone")
    assert "python -m clockplan bench" in finished.stderr


def test_the_clone_is_found_from_the_package_not_the_working_folder(tmp_path):
    # As the console script of an editable install runs it: the package is importable, the
    # clone is not on sys.path.
    program = (
        "import sys, clockplan\n"
        "sys.path.remove(sys.argv[1])\n"
        "sys.argv[1:] = ['bench', '--cases', 'nope']\n"
        "from clockplan.entry import main_entry\n"
        "main_entry()"
    )
    finished = subprocess.run(
        [sys.executable, "-c", program, str(ROOT)],
        cwd=tmp_path,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        capture_output=True,
        text=True,
        check=False,
    )
    assert finished.returncode == 2
    assert finished.stderr.startswith("clockplan: --cases: 'nope' is not a case; the cases: small")


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
    assert measure.compare_optima([solved], _enumeration(key)) is None
    assert "enumerator's optimum" in measure.compare_optima([solved], _enumeration(key + 1))
    assert "no feasible plan" in measure.compare_optima([solved], _enumeration(None))


def test_a_capped_enumerator_only_mismatches_when_it_beats_a_proof(solved):
    key = solved.plans[0].worst_steps
    assert measure.compare_optima([solved], _enumeration(key + 5, finished=False)) is None
    assert "below the solver's proven" in measure.compare_optima(
        [solved], _enumeration(key - 1, finished=False)
    )


def test_a_mismatch_exits_1_loudly(monkeypatch, capsys):
    def wrong(scenario, *, cap):
        return _enumeration(1)  # no board in the benchmark reaches key 1 (0.01 %)

    monkeypatch.setattr(measure, "enumerate_plans", wrong)
    monkeypatch.setattr(measure, "_time_plan_process", lambda path: 0.0)
    monkeypatch.setattr(measure, "peak_search_memory", lambda path: 0)
    assert main(["bench", "--cases", "small", "--runs", "3", "--cap", "1"]) == 1
    out = capsys.readouterr().out
    assert "MISMATCH in small" in out


def test_the_scaling_boards_parse_and_grow_along_their_dimension():
    sizes = {}
    for dimension, point in scaling_variants():
        parsed = parse_scenario(scaling_scenario(point), "scaling.toml")
        assert len(parsed.peripherals) == point.peripherals
        assert len(parsed.plls) == point.plls
        assert len(parsed.source("main").candidates) == point.candidates
        assert {pll.fraction_bits for pll in parsed.plls} == {point.fraction_bits}
        sizes.setdefault(dimension, []).append(raw_combinations(parsed))
    for dimension, counts in sizes.items():
        assert counts == sorted(counts), dimension
