"""``clockplan show``: the tree in the terminal, every export, and no file ever clobbered."""

from __future__ import annotations

import io
import json
import os
import stat
import xml.etree.ElementTree as ET

import networkx as nx
import pytest
from rich.console import Console

import clockplan.commands.show as show
from clockplan.scenario import default_scenario_path
from clockplan.treeview import plan_tree
from tests.helpers import bench_ranked, run_cli

NODES = ("main", "slow", "system", "core", "usb_clock", "bus", "usb", "console", "clock_tick")
"""Every node of the bundled default scenario."""


def test_show_prints_the_tree_of_the_default_scenario(capsys):
    status, out, err = run_cli(capsys, "show", "--top", "1")
    assert status == 0
    assert "optimal (every stage proved)" in out
    assert "Weather-station hub, rev A" in out
    for name in NODES:
        assert name in out
    assert "120 MHz" in out and "÷2" in out  # the core clock and its divider
    assert "[pass] 115200 baud" in out
    assert "at risk" in out  # the legend explains the marks
    assert err == ""


def test_every_export_is_written_and_reads_back(capsys, tmp_path):
    # A folder name longer than a terminal line: each "wrote PATH" line must stay whole,
    # for the user to copy (it once wrapped when the temporary path happened to be long).
    folder = tmp_path / ("exports-" + "x" * 100)
    folder.mkdir()
    paths = {name: folder / f"plan.{name}" for name in ("dot", "graphml", "svg", "header")}
    paths["report"] = folder / "plan.md"
    options = [item for name, path in paths.items() for item in (f"--{name}", str(path))]
    status, out, _ = run_cli(capsys, "show", "--top", "1", *options)
    assert status == 0
    for path in paths.values():
        assert f"wrote {path}" in out
    graph = nx.read_graphml(paths["graphml"])
    assert set(graph.nodes) == set(NODES)
    assert graph.nodes["core"]["hz"] == "120000000"
    assert paths["dot"].read_text(encoding="utf-8").startswith('digraph "clockplan" {')
    ET.fromstring(paths["svg"].read_bytes())
    assert "#define CLOCKPLAN_CORE_HZ 120000000UL" in paths["header"].read_text(encoding="utf-8")
    assert "## Cautions" in paths["report"].read_text(encoding="utf-8")


def test_json_prints_only_the_shown_plan(capsys):
    status, out, _ = run_cli(capsys, "show", "--top", "1", "--rank", "2", "--json")
    assert status == 0
    data = json.loads(out)
    assert data["shown_rank"] == 2
    assert [plan["rank"] for plan in data["plans"]] == [2]
    assert data["plans"][0]["clocks"]["core"] == "120000000"


def test_existing_file_is_refused_before_any_search(capsys, tmp_path, monkeypatch):
    target = tmp_path / "tree.svg"
    target.write_text("keep me", encoding="utf-8")

    def no_search(*args, **kwargs):
        raise AssertionError("the search ran although the output was refused")

    monkeypatch.setattr(show, "run_search", no_search)
    status, out, err = run_cli(capsys, "show", "--svg", str(target))
    assert status == 2
    assert out == ""
    assert err.count("\n") == 1 and str(target) in err and "--force" in err
    assert target.read_text(encoding="utf-8") == "keep me"


def test_force_replaces_an_existing_file(capsys, tmp_path):
    target = tmp_path / "settings.h"
    target.write_text("old", encoding="utf-8")
    status, _, _ = run_cli(capsys, "show", "--top", "1", "--header", str(target), "--force")
    assert status == 0
    assert "CLOCKPLAN_SYSTEM_MULTIPLIER" in target.read_text(encoding="utf-8")


@pytest.mark.parametrize(
    ("argv", "expected"),
    [
        (["--rank", "0"], "--rank"),
        (["--dot", "SAME", "--svg", "SAME"], "also the path of --dot"),
        (["--report", "missing-folder/r.md"], "does not exist"),
    ],
)
def test_bad_options_exit_2_before_searching(capsys, tmp_path, monkeypatch, argv, expected):
    monkeypatch.setattr(show, "run_search", lambda *a, **k: pytest.fail("searched"))
    argv = [str(tmp_path / item) if "SAME" in item or "/" in item else item for item in argv]
    status, _, err = run_cli(capsys, "show", *argv)
    assert status == 2
    assert expected in err and err.count("\n") == 1


def test_json_stdout_stays_pure_when_files_are_written(capsys, tmp_path):
    status, out, err = run_cli(
        capsys, "show", "--top", "1", "--json", "--dot", str(tmp_path / "a.dot")
    )
    assert status == 0
    json.load(io.StringIO(out))
    assert "wrote" in err


def test_no_plan_exits_1_and_writes_nothing(capsys, tmp_path):
    board = tmp_path / "board.toml"
    # 7 MHz cannot make USB's 48 MHz with no PLL: proved infeasible at once
    board.write_text(
        '[sources.main]\nkind = "crystal"\nchoose = ["7 MHz"]\n'
        '[peripherals.usb]\nkind = "usb-full-speed"\nfrom = "main"\n',
        encoding="utf-8",
    )
    status, out, _ = run_cli(capsys, "show", str(board), "--svg", str(tmp_path / "t.svg"))
    assert status == 1
    assert "no plan fits (proved)" in out and "Nothing" in out
    assert not (tmp_path / "t.svg").exists()


def test_tree_hangs_a_mux_under_its_chosen_input_and_marks_every_verdict():
    scenario, ranked = bench_ranked()
    console = Console(width=200, color_system=None, record=True)
    console.print(plan_tree(scenario, ranked))
    lines = console.export_text().splitlines()
    assert any("sd_clock (mux input, not chosen)" in line for line in lines)
    mux = next(i for i, line in enumerate(lines) if "sd_clock  28.07" in line)
    assert "card" in lines[mux + 1]  # the card hangs under the chosen input's mux
    assert any("audio_pll  196.5 MHz  ÷1 ×16 + 3/8" in line for line in lines)
    assert any(line.strip(" │├└─").startswith("[FAIL] 48 MHz clock") for line in lines)
    assert any(line.strip(" │├└─").startswith("[at risk] 28 MHz") for line in lines)
    assert any("divisor_9600 = 182.75" in line for line in lines)


def _refused_before_searching(capsys, monkeypatch, *argv):
    monkeypatch.setattr(show, "run_search", lambda *a, **k: pytest.fail("searched"))
    status, out, err = run_cli(capsys, "show", *argv)
    assert (status, out) == (2, "")
    assert err.count("\n") == 1 and "Traceback" not in err
    return err


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")
def test_force_refuses_to_replace_a_fifo(capsys, tmp_path, monkeypatch):
    fifo = tmp_path / "tree.dot"
    os.mkfifo(fifo)
    err = _refused_before_searching(capsys, monkeypatch, "--dot", str(fifo), "--force")
    assert f"clockplan: --dot: {fifo} is a FIFO (named pipe)" in err
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)


def test_force_refuses_to_replace_a_device(capsys, monkeypatch):
    err = _refused_before_searching(capsys, monkeypatch, "--svg", "/dev/null", "--force")
    assert "clockplan: --svg: /dev/null is a character device" in err


def test_force_refuses_to_replace_the_input_scenario(capsys, tmp_path, monkeypatch):
    board = tmp_path / "board.toml"
    board.write_bytes(default_scenario_path().read_bytes())
    err = _refused_before_searching(
        capsys, monkeypatch, str(board), "--report", str(board), "--force"
    )
    assert f"--report: {board} is the scenario being read" in err
    assert board.read_bytes() == default_scenario_path().read_bytes()


def test_a_trailing_separator_is_a_folder_not_a_file_name(capsys, tmp_path, monkeypatch):
    target = f"{tmp_path / 'newdir'}{os.sep}"
    err = _refused_before_searching(capsys, monkeypatch, "--svg", target, "--force")
    assert "ends with a separator, so it names a folder" in err
    assert not (tmp_path / "newdir").exists()


@pytest.mark.parametrize("top", ["0", "-5"])
def test_top_below_one_is_refused(capsys, monkeypatch, top):
    err = _refused_before_searching(capsys, monkeypatch, "--top", top)
    assert err == f"clockplan: --top: {top} is not a positive count of plans\n"
