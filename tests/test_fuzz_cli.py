"""Fuzzing whole command lines, for every command: no traceback, one line for bad input.

Each example is a command with a random mix of its own options, given ordinary or
hostile values (empty, negative, huge, look-alike digits, control characters, paths to
special files). Whatever the mix, ``main`` returns 0, 1 or 2; a 2 is one line on
standard error; nothing raw reaches the terminal; and no file changes that the command
line did not name with ``--force``. Commands that search get a board of one clock and
short time limits, so no example depends on speed.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clockplan.cli import main
from clockplan.commands import COMMAND_NAMES

FUZZ = settings(
    max_examples=25,
    deadline=None,
    database=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)

TINY_BOARD = """\
title = "One clock"
[sources.main]
kind = "crystal"
choose = ["12 MHz", "16 MHz"]
[peripherals.sensor]
kind = "clock"
from = "main"
rate = "1 MHz"
divide = "1..64"
allowance = "1 %"
"""

HOSTILE = [
    "",
    " ",
    "-5",
    "0",
    "1",
    "-1",
    "nan",
    "inf",
    "1e999",
    "2**99999",
    "2**99999 cycles",
    "9" * 5000,
    "\uff11\uff12",
    "\u0661\u0662 MHz",
    "12\nMHz",
    "\x1b]0;title\x07",
    "\x1b[31m",
    "\u202e",
    "x" * 300,
    "12 \u041cHz",
    "12 mhz",
    "1 mHz",
    "-",
    "/",
]
"""Values that broke, or could break, a quick command or the loader."""

hostile = st.one_of(st.sampled_from(HOSTILE), st.text(max_size=8))


def values(*ordinary: str) -> st.SearchStrategy[str]:
    """An option's value: one of its ordinary values, or a hostile one."""
    return st.one_of(st.sampled_from(ordinary), hostile)


FLAG = None
"""An option that takes no value."""

SEARCH = {
    "--top": values("1", "2", "3"),
    "--time-limit": values("0.5", "1", "2"),
    "--workers": values("1", "2", "65"),
}
OPTIONS: dict[str, dict[str, st.SearchStrategy[str] | None]] = {
    "plan": {**SEARCH, "--json": FLAG},
    "check": {**SEARCH, "--json": FLAG},
    "show": {
        **SEARCH,
        "--rank": values("1", "2"),
        "--json": FLAG,
        "--force": FLAG,
        **{f"--{name}": st.just("TARGET") for name in ("dot", "graphml", "svg", "header")},
        "--report": st.just("TARGET"),
    },
    "diff": {
        "--rank-a": values("1", "2"),
        "--rank-b": values("1", "2"),
        "--time-limit": values("0.5", "1"),
        "--workers": values("1", "2"),
        "--json": FLAG,
    },
    "crystals": {
        "--baud": values("9600", "115200,9600", ",".join(str(1200 + k) for k in range(300))),
        "--oversampling": values("16", "8", "7"),
        "--fraction-bits": values("0", "4", "40"),
        "--usb-full-speed": FLAG,
        "--fs": values("48k", "44.1k,48k"),
        "--mclk": values("256", "0"),
        "--rate": values("1kHz", "12M"),
        "--allowance": values("10 ppm", "1 %", "200 %"),
        "--divisor": values("1..65535", "pow2 0..9", "1,2,4", "1..100000000"),
        "--pll": FLAG,
        "--reference-divider": values("1..16", "1..1000000"),
        "--multiplier": values("8..64", "1..1000000"),
        "--vco": values("96 MHz..480 MHz", "1 Hz..1 THz"),
        "--pfd": values("1 MHz..4 MHz", "4 MHz..1 MHz"),
        "--catalog": FLAG,
        "--candidates": values("8 MHz,12 MHz", "12 MHz"),
        "--range": values("1 MHz..50 MHz", "1 Hz..1 THz"),
        "--step": values("100 Hz", "1 mHz", "1 kHz"),
        "--top": values("1", "10", "1000", "1001"),
        "--json": FLAG,
    },
    "tick": {
        "--source": values("32.768 kHz", "12 MHz", "1 mHz"),
        "--chain": values(
            "pow2 15",
            "128 x 256",
            "128, 256",
            "1..128 × 1..32768",
            "1..1000000 x 1..1000000",
            "1|8",
            "x",
        ),
        "--rate": values("1 Hz", "1 kHz"),
        "--list": values("1", "10", "999999999999999999"),
        "--curve": values("tuning-fork", "sine"),
        "--coefficient": values("-0.034", "1e99"),
        "--turnover": values("25", "1e99"),
        "--band": values("20 ppm", "200 %"),
        "--temperature": values("-20..70", "-20CC..70", "70..-20"),
        "--calibrate": values("5 ppm", "-3 ppm"),
        "--window": values("2**21 cycles", "60 s", "1e99 s"),
        "--step-cycles": values("1", "2"),
        "--max-steps": values("0", "10"),
        "--json": FLAG,
    },
    "pierce": {
        "--frequency": values("16 MHz", "32.768 kHz"),
        "--load": values("12 pF", "0 pF", "1 F"),
        "--shunt": values("5 pF", "1 F"),
        "--motional": values("7 fF", "0 fF"),
        "--esr": values("40 ohm", "0 ohm", "1e99 ohm"),
        "--max-drive": values("100 uW", "0 uW"),
        "--stray": values("3 pF", "100 pF"),
        "--gm": values("10 mA/V", "0 mA/V"),
        "--swing": values("1 V", "0 V"),
        "--node-capacitance": values("5 pF"),
        "--series": values("E12", "E24", "E96"),
        "--unequal": FLAG,
        "--json": FLAG,
    },
    "bench": {
        "--runs": values("3", "2"),
        "--cap": values("1", "-1"),
        "--cases": values("small", "nope"),
        "--scaling": FLAG,
        "--json": FLAG,
    },
}
"""Every command's options and what to give them."""

FILE_COMMANDS = {"plan", "check", "show", "diff"}


def test_every_command_is_fuzzed():
    assert set(OPTIONS) == set(COMMAND_NAMES)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """The tiny board, a file of the user's, a FIFO and a folder to aim outputs at."""
    folder = tmp_path_factory.mktemp("fuzz")
    board = folder / "board.toml"
    board.write_text(TINY_BOARD, encoding="utf-8")
    mine = folder / "mine.txt"
    fifo = folder / "pipe"
    if hasattr(os, "mkfifo"):
        os.mkfifo(fifo)
    return {"folder": folder, "board": board, "mine": mine, "fifo": fifo}


@st.composite
def command_lines(draw, command: str, files: dict[str, Path]) -> list[str]:
    """One command line: the command, its file(s) and a random subset of its options."""
    folder = files["folder"]
    paths = [str(files["board"]), "", str(folder / "missing.toml"), str(folder), "/dev/null"]
    if files["fifo"].exists():
        paths.append(str(files["fifo"]))
    targets = [
        str(folder / "out.svg"),
        str(files["mine"]),
        str(files["board"]),
        "/dev/null",
        f"{folder / 'newdir'}{os.sep}",
        "",
    ]
    if files["fifo"].exists():
        targets.append(str(files["fifo"]))
    argv = [command]
    if command in FILE_COMMANDS:
        board_or_other = st.one_of(st.just(str(files["board"])), st.sampled_from(paths), hostile)
        argv.append(draw(board_or_other))
        if command == "diff" and draw(st.booleans()):
            argv.append(draw(board_or_other))
    options = OPTIONS[command]
    chosen = draw(st.lists(st.sampled_from(sorted(options)), max_size=6, unique=True))
    for name in chosen:
        strategy = options[name]
        if strategy is FLAG:
            argv.append(name)
            continue
        value = draw(strategy)
        if value == "TARGET":
            value = draw(st.sampled_from(targets))
        argv += [name, value] if not value.startswith("-") else [f"{name}={value}"]
    if command == "bench":  # never a whole benchmark: two runs are refused (at least 3)
        argv += ["--runs", "2"]
    if command in FILE_COMMANDS and "--time-limit" not in chosen:
        argv += ["--time-limit", "2"]
    return argv


def _snapshot(files: dict[str, Path]) -> dict[str, object]:
    return {
        "board": files["board"].read_bytes(),
        "null": stat.S_ISCHR(os.lstat("/dev/null").st_mode),
        "fifo": files["fifo"].exists() and stat.S_ISFIFO(os.lstat(files["fifo"]).st_mode),
    }


def run_and_check(argv: list[str], files: dict[str, Path], capsys) -> None:
    files["mine"].write_text("mine", encoding="utf-8")
    before = _snapshot(files)
    status = main(argv)
    out, err = capsys.readouterr()
    assert status in (0, 1, 2), (argv, status, err)
    assert "Traceback" not in out + err
    for raw in ("\x1b", "\x07", "\u202e"):
        assert raw not in out + err, (argv, out[-300:], err)
    if status == 2:
        assert err.startswith("clockplan: ") and err.count("\n") == 1, (argv, err)
        assert len(err) <= 2100, argv
    assert _snapshot(files) == before, argv
    replaced_mine = "--force" in argv and str(files["mine"]) in argv
    if not replaced_mine:
        assert files["mine"].read_text(encoding="utf-8") == "mine", argv


EXAMPLES = {"plan": 15, "check": 15, "show": 15, "diff": 10, "bench": 15}
"""Fewer examples for the commands that search (each runs a search); 60 for the rest."""


@pytest.mark.parametrize("command", sorted(OPTIONS))
def test_any_command_line_ends_in_0_1_or_one_line_and_2(command, files, capsys):
    @settings(FUZZ, max_examples=EXAMPLES.get(command, 60))
    @given(st.data())
    def property(data):
        run_and_check(data.draw(command_lines(command, files)), files, capsys)

    property()
