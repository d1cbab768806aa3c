"""The C header: it compiles, and the constants a program prints equal the plan's settings."""

from __future__ import annotations

import re
import shutil
import subprocess
from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.errors import ClockplanError, ScenarioError
from clockplan.evaluate import evaluate_plan
from clockplan.header import c_identifier, file_name, header_text
from clockplan.peripherals.base import Stages
from clockplan.plan import Plan
from clockplan.registers import Encoding, UnencodableError
from clockplan.result import RankedPlan, Status
from clockplan.scenario import load_scenario
from tests.helpers import bench_ranked, ranked_by_hand, run_cli, scenario_from

SCENARIOS = Path(__file__).parent.parent / "scenarios"

COMPILER = shutil.which("gcc") or shutil.which("cc")


def expected_constants(scenario, ranked) -> tuple[dict[str, int], list[str]]:
    """What the header must define (worked out here, apart from the header code) and must
    not, for a scenario whose registers hold every value as it is."""
    muxes = {mux.name: mux.inputs for mux in scenario.muxes}
    rate_keys = {check.requirement.setting for check in ranked.evaluation.checks}
    constants: dict[str, int] = {}
    for key, value in ranked.plan.settings.items():
        node = key.split(".", 1)[0]
        if node in muxes:
            constants[c_name(key)] = muxes[node].index(value)
        elif node not in {p.name for p in scenario.peripherals}:
            constants[c_name(key)] = value
    for check in ranked.evaluation.checks:
        constants.update(rate_constants(check, ranked.plan.settings))
    absent = []
    for name, hz in ranked.evaluation.clocks.items():
        if hz.denominator == 1:
            constants[c_name(name, "hz")] = hz.numerator
            absent += [c_name(name, "hz_numerator"), c_name(name, "hz_denominator")]
        else:
            constants[c_name(name, "hz_numerator")] = hz.numerator
            constants[c_name(name, "hz_denominator")] = hz.denominator
            absent.append(c_name(name, "hz"))
    absent += [c_name(key) for key in rate_keys if c_name(key) not in constants]
    return constants, absent


def c_name(*parts: str) -> str:
    return "CLOCKPLAN_" + "_".join(parts).upper().replace(".", "_")


def rate_constants(check, settings) -> dict[str, int]:
    """One rate's register fields: stages as they are; a bit timing's prescaler (the count
    over the quanta) and segments; a fractional divisor's whole part and sixteenths; or the
    count over its scale (an oversampling or a master-clock ratio)."""
    requirement, option, count = check.requirement, check.option, check.divisor
    key = requirement.setting
    if isinstance(requirement.divisor, Stages):
        stages = requirement.divisor.stages
        return {c_name(key, name): settings[f"{key}.{name}"] for name, _ in stages}
    if option.settings:
        segments = {c_name(key, name): value for name, value in option.settings}
        del segments[c_name(key, "quanta")]
        return {c_name(key, "prescaler"): count // option.factor, **segments}
    if requirement.numerator > 1:
        step = option.factor // requirement.numerator  # the oversampling
        steps = count // step
        whole, fraction = divmod(steps, requirement.numerator)
        return {c_name(key, "whole"): whole, c_name(key, "fraction"): fraction}
    assert count % option.factor == 0
    return {c_name(key): count // option.factor}


def compile_and_run(tmp_path, header: str, names: list[str], absent: list[str]) -> dict[str, str]:
    (tmp_path / "clock_settings.h").write_text(header, encoding="utf-8")
    lines = [
        "#include <stdio.h>",
        '#include "clock_settings.h"',
        '#include "clock_settings.h" /* twice: the include guard must hold */',
        "int main(void) {",
    ]
    lines += [f'    printf("{name}=%llu\\n", (unsigned long long)({name}));' for name in names]
    for name in absent:
        lines += [f"#ifdef {name}", f'    printf("{name}=defined\\n");', "#endif"]
    lines += ["    return 0;", "}"]
    (tmp_path / "main.c").write_text("\n".join(lines) + "\n", encoding="utf-8")
    program = tmp_path / "main"
    flags = ["-std=c99", "-Wall", "-Wextra", "-pedantic", "-Werror"]
    build = subprocess.run(
        [COMPILER, *flags, "-o", str(program), str(tmp_path / "main.c")],
        capture_output=True,
        text=True,
        check=False,
    )
    assert build.returncode == 0, build.stderr
    run = subprocess.run([str(program)], capture_output=True, text=True, check=True)
    return dict(line.split("=", 1) for line in run.stdout.splitlines())


needs_compiler = pytest.mark.skipif(COMPILER is None, reason="no C compiler (gcc or cc) here")


@needs_compiler
def test_bench_header_compiles_and_prints_the_plan(tmp_path):
    # The bench title holds '*/' and a backslash: the comments must survive them.
    scenario, ranked = bench_ranked()
    constants, absent = expected_constants(scenario, ranked)
    assert "CLOCKPLAN_CORE_HZ" in absent  # 196.5 MHz / 7 is no whole number of hertz
    printed = compile_and_run(tmp_path, header_text(scenario, ranked), list(constants), absent)
    assert printed == {name: str(value) for name, value in constants.items()}
    assert printed["CLOCKPLAN_SD_CLOCK_INPUT"] == "1"  # "core" is input 1
    assert printed["CLOCKPLAN_AUDIO_PLL_FRACTION"] == "3"


@needs_compiler
def test_default_header_compiles_and_prints_the_plan(tmp_path, default_scenario, default_best):
    ranked = default_best.plans[0]
    constants, absent = expected_constants(default_scenario, ranked)
    assert not [name for name in absent if name.endswith("_HZ")]  # every clock whole hertz
    header = header_text(default_scenario, ranked)
    printed = compile_and_run(tmp_path, header, list(constants), absent)
    assert printed == {name: str(value) for name, value in constants.items()}
    assert "#define CLOCKPLAN_CORE_HZ 120000000UL" in header


@needs_compiler
def test_showcase_header_compiles_and_prints_the_plan(tmp_path):
    scenario = load_scenario(SCENARIOS / "kinds-showcase.toml")
    ranked = ranked_by_hand(scenario, showcase_plan(scenario))
    constants, absent = expected_constants(scenario, ranked)
    assert "CLOCKPLAN_AUDIO_HZ" in absent  # 2925 MHz / 7 is no whole number of hertz
    printed = compile_and_run(tmp_path, header_text(scenario, ranked), list(constants), absent)
    assert printed == {name: str(value) for name, value in constants.items()}
    # Worked by hand: 120 MHz / (16 x 115200) = 65.10; the plan's 65.125 = 65 + 2/16;
    # 80 MHz / 500 kbit/s = 160 = 8 x 20 quanta; 2 Mbit/s: 40 = 4 x 10; 120 MHz / 1 kHz =
    # 2 x 60000; the speaker's 4352 / 128 fs = 34.
    assert {name: printed[name] for name in HAND_WORKED_SHOWCASE} == HAND_WORKED_SHOWCASE


HAND_WORKED_SHOWCASE = {
    "CLOCKPLAN_CONSOLE_DIVISOR_115200_WHOLE": "65",
    "CLOCKPLAN_CONSOLE_DIVISOR_115200_FRACTION": "2",
    "CLOCKPLAN_VEHICLE_BUS_NOMINAL_DIVISOR_PRESCALER": "8",
    "CLOCKPLAN_VEHICLE_BUS_DATA_DIVISOR_PRESCALER": "4",
    "CLOCKPLAN_SCHEDULER_PERIOD_PRESCALER": "2",
    "CLOCKPLAN_SCHEDULER_PERIOD_RELOAD": "60000",
    "CLOCKPLAN_SPEAKER_MASTER_DIVIDE_48000": "34",
    "CLOCKPLAN_AUDIO_HZ_NUMERATOR": "2925000000",
    "CLOCKPLAN_AUDIO_HZ_DENOMINATOR": "7",
}


def option_index(scenario, setting: str, quanta: int) -> int:
    """Which of a CAN rate's options is the bit timing of ``quanta`` time quanta."""
    (requirement,) = [
        r for p in scenario.peripherals for r in p.requirements if r.setting == setting
    ]
    return next(i for i, option in enumerate(requirement.options) if option.factor == quanta)


def showcase_plan(scenario) -> Plan:
    """The search's best plan for kinds-showcase.toml, written out (no search here)."""
    settings = {
        "system.reference_divider": 10,
        "system.multiplier": 192,
        "audio.reference_divider": 7,
        "audio.multiplier": 117,
        "core.divide": 2,
        "usb_clock.divide": 10,
        "bus.divide": 2,
        "can_clock.divide": 6,
        "audio_clock.divide": 2,
        "console.divisor_115200": 16672,  # 65.125 x 16 x 16
        "console.divisor_9600": 200000,
        "usb.divide": 1,
        "vehicle_bus.nominal_divisor": 160,
        "vehicle_bus.nominal_divisor_option": option_index(
            scenario, "vehicle_bus.nominal_divisor", 20
        ),
        "vehicle_bus.data_divisor": 40,
        "vehicle_bus.data_divisor_option": option_index(scenario, "vehicle_bus.data_divisor", 10),
        "speaker.master_divide_48000": 4352,
        "speaker.master_divide_44100": 4736,
        "ethernet.divide": 1,
        "card.identification_divide": 301,
        "card.divide": 3,
        "scheduler.period.prescaler": 2,
        "scheduler.period.reload": 60000,
    }
    return Plan({"main": Fraction(25_000_000), "phy_clock": Fraction(50_000_000)}, settings)


REGISTER_BOARD = """
title = "Register fields"
[sources.main]
kind = "oscillator"
choose = ["20 MHz"]
[plls.system]
from = "main"
reference_divider = "1..4"
multiplier = "10..40"
fraction_bits = 3
vco = "100 MHz .. 400 MHz"
register = { reference_divider = "minus-one", multiplier = "value", fraction = "value" }
[dividers.quarter]
from = "system"
divide = "pow2 0..3"
register = { divide = "log2" }
[muxes.pick]
from = ["quarter", "main"]
register = { input = { 0 = 6, 1 = 2 } }
[dividers.can_clock]
from = "system"
divide = [4, 5]
[peripherals.console]
kind = "uart"
from = "main"
baud = 38400
fraction_bits = 4
divisor = "1..4095"
[peripherals.field_bus]
kind = "can"
from = "can_clock"
bitrate = "500 kHz"
register = { prescaler = "minus-one", phase2 = "minus-one", sjw = { 1 = 0, 2 = 1, 3 = 2, 4 = 3 } }
[peripherals.scheduler]
kind = "timer"
from = "pick"
rate = "1 kHz"
register = { reload = "minus-one" }
"""


def register_board():
    return scenario_from(REGISTER_BOARD, "registers.toml")


def register_plan(scenario, **changed: int) -> Plan:
    """20 MHz / 2 x (40 + 0/8) = 400 MHz; / 4 = 100 MHz for the mux and the timer; / 5 =
    80 MHz for the CAN controller; 20 MHz for the UART."""
    settings = {
        "system.reference_divider": 2,
        "system.multiplier": 40,
        "system.fraction": 0,
        "quarter.divide": 4,
        "pick.input": "quarter",
        "can_clock.divide": 5,
        "console.divisor_38400": 8336,  # 32.5625 x 16 x 16: 20 MHz / (16 x 32.5625) Bd
        "field_bus.bit_divisor": 160,  # 80 MHz / 500 kbit/s = 8 x 20 quanta
        "field_bus.bit_divisor_option": option_index(scenario, "field_bus.bit_divisor", 20),
        "scheduler.period.prescaler": 2,  # 100 MHz / 1 kHz = 2 x 50000
        "scheduler.period.reload": 50000,
        **changed,
    }
    return Plan({"main": Fraction(20_000_000)}, settings)


REGISTER_LINES = [
    "#define CLOCKPLAN_SYSTEM_REFERENCE_DIVIDER 1 /* 2 minus one */",
    "#define CLOCKPLAN_SYSTEM_MULTIPLIER 40",
    "#define CLOCKPLAN_SYSTEM_FRACTION 0 /* 0/8 */",
    "#define CLOCKPLAN_QUARTER_DIVIDE 2 /* log2 of 4 */",
    "#define CLOCKPLAN_CAN_CLOCK_DIVIDE 5",
    "#define CLOCKPLAN_PICK_INPUT 6 /* table code for 0; quarter (inputs: 0 quarter, 1 main) */",
    "#define CLOCKPLAN_CONSOLE_DIVISOR_38400_WHOLE 32 /* divisor 32.5625 = 32 + 9/16 */",
    "#define CLOCKPLAN_CONSOLE_DIVISOR_38400_FRACTION 9 /* 9/16 */",
    "#define CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_PRESCALER 7 "
    "/* 8 minus one; 20 tq, sample point 85 %, SJW 3 */",
    "#define CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_PROPAGATION 8",
    "#define CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_PHASE1 8",
    "#define CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_PHASE2 2 /* 3 minus one */",
    "#define CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_SJW 2 /* table code for 3 */",
    "#define CLOCKPLAN_SCHEDULER_PERIOD_PRESCALER 2",
    "#define CLOCKPLAN_SCHEDULER_PERIOD_RELOAD 49999 /* 50000 minus one */",
]
"""Worked by hand. CAN at 20 tq, 87.5 % +/- 2.5 points wanted: 1 + 8 + 8 = 17 of 20 quanta
is the 85 % the option chose, phase 2 takes the other 3 (can.py's best split)."""


@needs_compiler
def test_each_encoding_reaches_the_header_and_compiles(tmp_path):
    scenario = register_board()
    ranked = ranked_by_hand(scenario, register_plan(scenario))
    header = header_text(scenario, ranked)
    defines = [line for line in header.splitlines() if line.startswith("#define CLOCKPLAN_")]
    fields = [line for line in defines if not line.split()[1].endswith(("_HZ", "_H"))]
    assert fields == REGISTER_LINES
    names = [line.split()[1] for line in REGISTER_LINES]
    printed = compile_and_run(tmp_path, header, names, ["CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_QUANTA"])
    assert printed == {line.split()[1]: line.split()[2] for line in REGISTER_LINES}


@pytest.mark.parametrize(
    ("encoding", "value", "field"),
    [
        (Encoding("value"), 7, 7),
        (Encoding("minus-one"), 10, 9),
        (Encoding("minus-one"), 1, 0),
        (Encoding("log2"), 1, 0),
        (Encoding("log2"), 8, 3),
        (Encoding("table", {1: 0, 2: 4, 4: 5}), 2, 4),
        (Encoding("table", {1: 0, 2: 4, 4: 5}), 4, 5),
    ],
)
def test_an_encoding_turns_a_value_into_its_field(encoding, value, field):
    assert encoding.encode(value) == field


@pytest.mark.parametrize(
    ("encoding", "value", "problem"),
    [
        (Encoding("minus-one"), 0, "0 minus one is below zero"),
        (Encoding("log2"), 6, "6 is not a power of two, so it has no log2"),
        (Encoding("log2"), 0, "0 is not a power of two, so it has no log2"),
        (Encoding("table", {1: 0, 2: 4}), 3, "3 has no code in the table (it lists 1, 2)"),
    ],
)
def test_a_value_an_encoding_cannot_hold_is_refused(encoding, value, problem):
    with pytest.raises(UnencodableError, match=re.escape(problem)):
        encoding.encode(value)


def test_a_plan_set_by_hand_outside_its_encoding_is_one_located_error():
    # The loader refuses an encoding that cannot hold an allowed value; only a plan that
    # breaks its limits (here divide 3 of 1, 2, 4, 8) reaches the header with one.
    scenario = register_board()
    plan = register_plan(scenario, **{"quarter.divide": 3})
    evaluation = evaluate_plan(scenario, plan)
    assert evaluation.violations
    ranked = RankedPlan(1, plan, evaluation, Status.FEASIBLE, (), dict(plan.sources))
    with pytest.raises(ScenarioError) as caught:
        header_text(scenario, ranked)
    assert str(caught.value) == (
        "registers.toml: dividers.quarter.register.divide: 3 is not a power of two, "
        "so it has no log2 (plan rank 1)"
    )


def test_the_same_plan_gives_the_same_bytes_from_any_folder(tmp_path):
    text = (SCENARIOS / "kinds-showcase.toml").read_text(encoding="utf-8")
    headers = []
    for folder in ("one", "two/deeper"):
        path = tmp_path / folder / "board.toml"
        path.parent.mkdir(parents=True)
        path.write_text(text, encoding="utf-8")
        scenario = load_scenario(path)
        headers.append(header_text(scenario, ranked_by_hand(scenario, showcase_plan(scenario))))
    assert headers[0].encode() == headers[1].encode()
    assert str(tmp_path) not in headers[0]
    assert "/* From file board.toml, plan rank 1 (optimal). */" in headers[0]


@pytest.mark.parametrize(
    ("path", "name"),
    [("board.toml", "board.toml"), ("/home/a/b.toml", "b.toml"), ("C:\\x\\c.toml", "c.toml")],
)
def test_file_name_drops_the_folders(path, name):
    assert file_name(path) == name


def test_header_names_its_origin_and_a_fractional_divisor():
    scenario, ranked = bench_ranked()
    header = header_text(scenario, ranked)
    assert "/* From file bench.toml, plan rank 1 (optimal). */" in header
    assert "#ifndef CLOCKPLAN_CLOCK_SETTINGS_H" in header
    # console's count 46784 is in 1/256ths of the divisor (16x oversampling, 4 fraction
    # bits): 46784 / 256 = 182.75 = 182 + 12/16
    assert (
        "#define CLOCKPLAN_CONSOLE_DIVISOR_9600_WHOLE 182 /* divisor 182.75 = 182 + 12/16 */\n"
        "#define CLOCKPLAN_CONSOLE_DIVISOR_9600_FRACTION 12 /* 12/16 */\n"
    ) in header
    assert (
        "#define CLOCKPLAN_CORE_HZ_NUMERATOR 196500000UL\n"
        "#define CLOCKPLAN_CORE_HZ_DENOMINATOR 7UL\n"
    ) in header
    assert "/* core (inputs: 0 usb_clock, 1 core) */" in header
    assert all(ord(character) < 128 for character in header)


@pytest.mark.parametrize(
    ("parts", "name"),
    [
        (("CLOCKPLAN", "core.divide"), "CLOCKPLAN_CORE_DIVIDE"),
        (("CLOCKPLAN", "console.divisor_115200"), "CLOCKPLAN_CONSOLE_DIVISOR_115200"),
        (("9lives", "x-y z"), "_9LIVES_X_Y_Z"),
    ],
)
def test_c_identifier(parts, name):
    assert c_identifier(*parts) == name


def test_two_settings_with_one_c_name_are_refused():
    scenario = scenario_from(
        """
        [sources.main]
        kind = "crystal"
        choose = ["8 MHz"]
        [dividers.fast]
        from = "main"
        divide = 2
        [dividers.FAST]
        from = "main"
        divide = 4
        """
    )
    plan = Plan({"main": Fraction(8_000_000)}, {"fast.divide": 2, "FAST.divide": 4})
    evaluation = evaluate_plan(scenario, plan)
    ranked = RankedPlan(1, plan, evaluation, Status.OPTIMAL, (), dict(plan.sources))
    with pytest.raises(ClockplanError, match="'fast.divide' and 'FAST.divide'.*FAST_DIVIDE"):
        header_text(scenario, ranked)


def test_register_tables_are_read_per_node():
    assert register_board().registers == {
        "system": {
            "reference_divider": Encoding("minus-one"),
            "multiplier": Encoding("value"),
            "fraction": Encoding("value"),
        },
        "quarter": {"divide": Encoding("log2")},
        "pick": {"input": Encoding("table", {0: 6, 1: 2})},
        "field_bus": {
            "prescaler": Encoding("minus-one"),
            "phase2": Encoding("minus-one"),
            "sjw": Encoding("table", {1: 0, 2: 1, 3: 2, 4: 3}),
        },
        "scheduler": {"reload": Encoding("minus-one")},
    }


@pytest.mark.parametrize(
    ("table", "line", "message"),
    [
        (
            "[peripherals.console]",
            'register = { divide = "value" }',
            "peripherals.console.register.divide: is not a known key here; did you mean 'divisor'?",
        ),
        (
            "[peripherals.scheduler]",
            'register = { reloads = "minus-one" }',
            "peripherals.scheduler.register.reloads: is not a known key here; "
            "did you mean 'reload'?",
        ),
        (
            "[peripherals.field_bus]",
            'register = { phase_2 = "minus-one" }',
            "peripherals.field_bus.register.phase_2: is not a known key here; "
            "did you mean 'phase2'?",
        ),
        (
            "[dividers.can_clock]",
            "register = { divide = { 4 = 1 } }",
            "dividers.can_clock.register.divide: 5 has no code in the table (it lists 4), "
            "yet the search may choose 5; narrow the allowed values or change the encoding",
        ),
    ],
)
def test_a_peripheral_names_its_own_register_fields(table, line, message):
    plain = re.sub(r"\nregister = \{ (prescaler|reload)[^\n]*", "", REGISTER_BOARD)
    text = plain.replace(f"{table}\n", f"{table}\n{line}\n", 1)
    with pytest.raises(ScenarioError) as caught:
        scenario_from(text, "registers.toml")
    assert str(caught.value) == f"registers.toml: {message}"


def test_show_writes_the_same_header_bytes_from_two_folders(tmp_path, capsys):
    headers = []
    for folder in ("one", "two/deeper"):
        board_path = tmp_path / folder / "registers.toml"
        board_path.parent.mkdir(parents=True)
        board_path.write_text(REGISTER_BOARD, encoding="utf-8")
        target = tmp_path / folder / "clock_settings.h"
        status, _, err = run_cli(capsys, "show", str(board_path), "--header", str(target))
        assert (status, err) == (0, "")
        headers.append(target.read_bytes())
    assert headers[0] == headers[1]
    assert b"/* From file registers.toml, plan rank 1 (optimal). */" in headers[0]
