"""Bad input never crashes: every malformed scenario is one located line on stderr, exit 2.

Each file in ``tests/malformed/`` is the same small bench board with exactly one
mistake. Its first line, ``# key: <key path>``, names where the message must point
(``# key: line N`` for mistakes below the level of keys: TOML syntax, encoding);
its second line says what is wrong.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from clockplan.cli import main
from clockplan.scenario import default_scenario_path, load_scenario

MALFORMED = Path(__file__).parent / "malformed"
FILES = sorted(MALFORMED.glob("*.toml"))
EXIT_BAD_INPUT = 2


def expected_key(path: Path) -> str:
    """The key path the file's first line promises the message will name."""
    first = path.read_bytes().split(b"\n", 1)[0].decode("ascii")
    assert first.startswith("# key: "), f"{path.name} must open with '# key: <key path>'"
    return first.removeprefix("# key: ")


def run_plan(path: Path | str, capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    """``clockplan plan PATH`` in-process: exit status, standard output, standard error."""
    status = main(["plan", str(path), "--time-limit", "5"])
    out, err = capsys.readouterr()
    return status, out, err


def assert_one_line_about(err: str, path: Path | str) -> None:
    """Exactly one line on stderr, and it names the file first."""
    assert err.endswith("\n") and err.count("\n") == 1, err
    assert err.startswith(f"clockplan: {path}: "), err
    assert "Traceback" not in err


def test_there_is_a_file_for_each_class_of_mistake():
    assert len(FILES) >= 150


@pytest.mark.parametrize("path", FILES, ids=lambda path: path.stem)
def test_each_file_opens_with_its_key_and_its_mistake(path):
    second = path.read_bytes().split(b"\n", 2)[1].decode("ascii")
    assert expected_key(path)
    assert second.startswith("# mistake: ")


@pytest.mark.parametrize("path", FILES, ids=lambda path: path.stem)
def test_malformed_file_is_one_located_line_and_exit_2(path, capsys):
    before = path.read_bytes()
    status, out, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert out == ""
    assert_one_line_about(err, path)
    key = expected_key(path)
    if key.startswith("line "):
        assert re.search(rf"\b{key}\b", err), err
    else:
        assert f"{path}: {key}: " in err
    assert err.count(f"{path}:") == 1, err  # the file and key are named once
    assert path.read_bytes() == before


@pytest.mark.parametrize(
    "name", ["huge_exponent", "not_utf8", "cycle", "bad_name_newline", "toml_unclosed_string"]
)
def test_no_traceback_reaches_the_user(name):
    path = MALFORMED / f"{name}.toml"
    done = subprocess.run(
        [sys.executable, "-m", "clockplan", "plan", str(path), "--time-limit", "5"],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert done.returncode == EXIT_BAD_INPUT
    assert done.stdout == ""
    assert_one_line_about(done.stderr, path)


def test_a_directory_is_refused(tmp_path, capsys):
    status, out, err = run_plan(tmp_path, capsys)
    assert (status, out) == (EXIT_BAD_INPUT, "")
    assert_one_line_about(err, tmp_path)
    assert "is a directory" in err


def test_a_missing_file_is_refused(tmp_path, capsys):
    path = tmp_path / "nope.toml"
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert "no such file" in err


def test_a_path_through_a_file_is_refused(tmp_path, capsys):
    parent = tmp_path / "board.toml"
    parent.write_text('title = "x"\n')
    path = parent / "inner.toml"
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert "cannot be read" in err


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0, reason="root reads any file")
def test_an_unreadable_file_is_refused(tmp_path, capsys):
    path = tmp_path / "locked.toml"
    path.write_text('title = "x"\n')
    path.chmod(0)
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert "cannot be read" in err


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero")
def test_an_endless_device_is_refused_without_reading_it(capsys):
    status, _, err = run_plan("/dev/zero", capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, "/dev/zero")
    assert "is a character device, not a regular file" in err


def test_a_file_past_the_size_limit_is_refused(tmp_path, capsys):
    path = tmp_path / "huge.toml"
    with path.open("wb") as stream:  # sparse: no disk is spent on it
        stream.truncate(5 * 2**20)
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert "is larger than 4 MiB" in err


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")
def test_a_fifo_is_refused_at_once_instead_of_waiting_for_a_writer(tmp_path):
    # In a child process with a deadline: were the FIFO opened for reading, it would block.
    path = tmp_path / "board.toml"
    os.mkfifo(path)
    done = subprocess.run(
        [sys.executable, "-m", "clockplan", "check", str(path)],
        capture_output=True,
        text=True,
        timeout=120,
        stdin=subprocess.DEVNULL,
    )
    assert done.returncode == EXIT_BAD_INPUT
    assert_one_line_about(done.stderr, path)
    assert "is a FIFO (named pipe), not a regular file" in done.stderr


@pytest.mark.parametrize("command", ["plan", "check", "show"])
def test_an_empty_file_name_is_refused_not_replaced_by_the_demo_board(command, capsys):
    status = main([command, ""])
    out, err = capsys.readouterr()
    assert (status, out) == (EXIT_BAD_INPUT, "")
    assert err == 'clockplan: "": the file name is empty; give a scenario file\n'


def test_diff_refuses_an_empty_file_name(capsys):
    status = main(["diff", "", "--time-limit", "5"])
    _, err = capsys.readouterr()
    assert status == EXIT_BAD_INPUT
    assert err == 'clockplan: "": the file name is empty; give a scenario file\n'


def test_an_empty_file_asks_for_an_oscillator(tmp_path, capsys):
    path = tmp_path / "empty.toml"
    path.write_bytes(b"")
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert f"{path}: sources: " in err


def test_a_byte_order_mark_is_accepted(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + default_scenario_path().read_bytes())
    assert load_scenario(path).title == load_scenario(default_scenario_path()).title


TWO_FRACTIONAL_PLLS = """\
title = "Two fractional PLLs in a row"
[sources.main]
kind = "crystal"
choose = ["12 MHz"]
[plls.first]
from = "main"
multiplier = "1..1000000"
fraction_bits = 24
vco = "100 MHz .. 1 GHz"
[plls.second]
from = "first"
multiplier = "1..1000000"
fraction_bits = 24
vco = "100 MHz .. 1 GHz"
[peripherals.radio]
kind = "clock"
from = "second"
rate = "500 MHz"
allowance = "10 ppm"
"""


def test_a_model_past_64_bits_is_one_line_and_exit_2(tmp_path, capsys):
    path = tmp_path / "cascade.toml"
    path.write_text(TWO_FRACTIONAL_PLLS)
    status, out, err = run_plan(path, capsys)
    assert (status, out) == (EXIT_BAD_INPUT, "")
    assert err.endswith("\n") and err.count("\n") == 1
    assert "the model would need integers of" in err


def test_a_model_past_64_bits_names_the_file_and_the_pll(tmp_path, capsys):
    path = tmp_path / "cascade.toml"
    path.write_text(TWO_FRACTIONAL_PLLS)
    _, _, err = run_plan(path, capsys)
    assert_one_line_about(err, path)
    assert f"{path}: plls.second" in err


def test_sources_together_may_not_offer_too_many_candidates(monkeypatch, capsys):
    # The bundled board offers the 44-frequency catalog for main and one for slow.
    monkeypatch.setattr("clockplan.scenario.MAX_CANDIDATES", 44)
    path = default_scenario_path()
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert f"{path}: sources.slow.choose: the sources offer 45 candidate frequencies" in err


def test_a_section_may_not_hold_too_many_entries(monkeypatch, capsys):
    monkeypatch.setattr("clockplan.scenario.MAX_ITEMS", 2)
    path = default_scenario_path()
    status, _, err = run_plan(path, capsys)
    assert status == EXIT_BAD_INPUT
    assert_one_line_about(err, path)
    assert f"{path}: dividers: holds 3 entries; at most 2" in err
