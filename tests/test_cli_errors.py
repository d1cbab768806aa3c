"""Usage errors are one line, ``clockplan: <message>``, and exit 2; help still works."""

from __future__ import annotations

import subprocess
import sys

import pytest

from clockplan.cli import main, one_line

EXIT_BAD_INPUT = 2


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["plan", "--bogus"], "unrecognized arguments: --bogus"),
        (["plan", "--top"], "argument --top: expected one argument"),
        (["plan", "--top", "many"], "argument --top: invalid int value: 'many'"),
        (["plan", "--time-limit", "soon"], "argument --time-limit: invalid float value"),
        (["plna"], "argument COMMAND: invalid choice: 'plna'"),
        ([], "the following arguments are required: COMMAND"),
        (["--nope"], "the following arguments are required: COMMAND"),
    ],
)
def test_usage_errors_are_one_line_and_exit_2(argv, message, capsys):
    status = main(argv)
    out, err = capsys.readouterr()
    assert status == EXIT_BAD_INPUT
    assert out == ""
    assert err.startswith("clockplan: ")
    assert err.endswith("\n") and err.count("\n") == 1
    assert message in err
    assert "usage:" not in err


def test_a_usage_error_points_to_the_right_help(capsys):
    main(["plan", "--bogus"])
    assert "see 'clockplan --help'" in capsys.readouterr().err
    main(["plan", "--top"])
    assert "see 'clockplan plan --help'" in capsys.readouterr().err


@pytest.mark.parametrize("argv", [["--help"], ["plan", "--help"]])
def test_help_still_prints_usage_and_exits_0(argv, capsys):
    status = main(argv)
    out, err = capsys.readouterr()
    assert status == 0
    assert out.startswith("usage: clockplan")
    assert err == ""


def test_version_exits_0(capsys):
    assert main(["--version"]) == 0
    assert capsys.readouterr().out.startswith("clockplan ")


def test_bad_option_values_from_commands_are_one_line(capsys):
    status = main(["plan", "--top", "0"])
    out, err = capsys.readouterr()
    assert (status, out) == (EXIT_BAD_INPUT, "")
    assert err == "clockplan: --top: 0 is not a positive count of plans\n"


def test_line_breaks_in_a_message_cannot_split_it():
    assert one_line("first\nsecond") == "first\\nsecond"
    assert one_line("plain") == "plain"


def test_usage_errors_from_the_installed_entry_point_are_one_line():
    done = subprocess.run(
        [sys.executable, "-m", "clockplan", "plan", "--bogus"],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert done.returncode == EXIT_BAD_INPUT
    assert done.stdout == ""
    assert done.stderr.startswith("clockplan: unrecognized arguments: --bogus")
    assert done.stderr.count("\n") == 1
