"""The C header: it compiles, and the constants a program prints equal the plan's settings."""

from __future__ import annotations

import shutil
import subprocess
from fractions import Fraction

import pytest

from clockplan.errors import ClockplanError
from clockplan.evaluate import evaluate_plan
from clockplan.header import c_identifier, header_text
from clockplan.plan import Plan
from clockplan.solve import RankedPlan, Status, search
from tests.helpers import bench_ranked, scenario_from

COMPILER = shutil.which("gcc") or shutil.which("cc")


def expected_constants(scenario, ranked) -> tuple[dict[str, int], list[str]]:
    """What the header must define (worked out here, apart from the header code) and must not."""
    muxes = {mux.name: mux.inputs for mux in scenario.muxes}
    constants: dict[str, int] = {}
    for key, value in ranked.plan.settings.items():
        node = key.split(".", 1)[0]
        index = muxes[node].index(value) if node in muxes else value
        constants["CLOCKPLAN_" + key.upper().replace(".", "_")] = index
    absent = []
    for name, hz in ranked.evaluation.clocks.items():
        define = f"CLOCKPLAN_{name.upper()}_HZ"
        if hz.denominator == 1:
            constants[define] = hz.numerator
        else:
            absent.append(define)
    return constants, absent


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
    assert not absent
    header = header_text(default_scenario, ranked)
    printed = compile_and_run(tmp_path, header, list(constants), absent)
    assert printed == {name: str(value) for name, value in constants.items()}
    assert "#define CLOCKPLAN_CORE_HZ 120000000UL" in header


SMALL_CAN_NODE = """
title = "Small CAN node"
[sources.main]
kind = "crystal"
choose = ["16 MHz"]
[dividers.input_clock]
from = "main"
divide = "1..4"
[peripherals.field_bus]
kind = "can"
from = "input_clock"
bitrate = "500 kHz"
[peripherals.scheduler]
kind = "timer"
from = "input_clock"
rate = "1 kHz"
[peripherals.flash]
kind = "spi"
from = "input_clock"
max = "5 MHz"
"""


@needs_compiler
def test_bit_timing_and_timer_stages_reach_the_header(tmp_path):
    scenario = scenario_from(SMALL_CAN_NODE)
    ranked = search(scenario, top=1).plans[0]
    constants, absent = expected_constants(scenario, ranked)
    assert "CLOCKPLAN_SCHEDULER_PERIOD_PRESCALER" in constants  # a stage is a setting
    assert "CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_OPTION" in constants
    (can,) = [c for c in ranked.evaluation.checks if c.requirement.peripheral == "field_bus"]
    assert can.option.settings  # quanta, segments and SJW that the chosen timing fixes
    for name, value in can.option.settings:
        constants[f"CLOCKPLAN_FIELD_BUS_BIT_DIVISOR_{name.upper()}"] = value
    printed = compile_and_run(tmp_path, header_text(scenario, ranked), list(constants), absent)
    assert printed == {name: str(value) for name, value in constants.items()}


def test_header_names_its_origin_and_a_scaled_divisor():
    scenario, ranked = bench_ranked()
    header = header_text(scenario, ranked)
    assert "bench.toml" in header and "plan rank 1 (optimal)" in header
    assert "#ifndef CLOCKPLAN_CLOCK_SETTINGS_H" in header
    # console's count is in 1/256ths of the divisor (16x oversampling, 4 fraction bits)
    assert (
        "#define CLOCKPLAN_CONSOLE_DIVISOR_9600 46784 "
        "/* 182.75 after / CLOCKPLAN_CONSOLE_DIVISOR_9600_SCALE */"
    ) in header
    assert "#define CLOCKPLAN_CONSOLE_DIVISOR_9600_SCALE 256" in header
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
