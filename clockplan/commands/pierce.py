"""``clockplan pierce``: load capacitors, pulling, start-up margin and drive level of a crystal."""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from rich import box
from rich.console import Console
from rich.table import Table

from clockplan.circuits import (
    MIN_GAIN_MARGIN,
    OSCILLATOR_GUIDE,
    PICOFARAD,
    CapacitorSeries,
    PierceAnalysis,
    PierceBoard,
    PierceCrystal,
    analyse_pierce,
)
from clockplan.errors import InputError
from clockplan.exits import Exit
from clockplan.quantities import (
    Dimension,
    QuantityError,
    exact_string,
    format_hz,
    parse_capacitance,
    parse_frequency,
    parse_positive_quantity,
)

DEFAULT_STRAY = "3 pF"
"""Stray capacitance assumed when none is given; common practice (2–5 pF), no source."""

CAUTION = (
    "Check the crystal's and the chip's datasheets for load capacitance, drive level and "
    "start-up margin, and prototype before production."
)


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``pierce`` subcommand."""
    parser = subparsers.add_parser(
        "pierce",
        help="load capacitors, pulling, gain margin and drive level of a Pierce crystal circuit",
        description="Choose the two load capacitors of a Pierce crystal oscillator and check "
        "frequency pulling, start-up gain margin and drive level. Capacitances take pF/nF/fF, "
        "resistances ohm/kohm/Mohm, transconductance mA/V or mS, power uW/mW. Exit status 1 "
        "when the gain margin or the drive level check fails.",
    )
    crystal = parser.add_argument_group("crystal (from its datasheet)")
    crystal.add_argument("--frequency", metavar="FREQ", help='nominal frequency, e.g. "16 MHz"')
    crystal.add_argument("--load", metavar="CAP", help='specified load capacitance, e.g. "12 pF"')
    crystal.add_argument("--shunt", metavar="CAP", help='shunt capacitance C0, e.g. "5 pF"')
    crystal.add_argument("--motional", metavar="CAP", help='motional capacitance, e.g. "7 fF"')
    crystal.add_argument("--esr", metavar="OHMS", help='equivalent series resistance, "40 ohm"')
    crystal.add_argument("--max-drive", metavar="POWER", help='largest drive level, "100 uW"')
    board = parser.add_argument_group("board and amplifier")
    board.add_argument(
        "--stray",
        metavar="CAP",
        help=f"pin and trace capacitance (default {DEFAULT_STRAY}: common practice, no source)",
    )
    board.add_argument("--gm", metavar="A/V", help='amplifier transconductance, e.g. "10 mA/V"')
    board.add_argument("--swing", metavar="VOLTS", help='peak-to-peak swing on the pin, "1 V"')
    board.add_argument(
        "--node-capacitance",
        metavar="CAP",
        help="capacitance of the driven node for the drive level "
        "(default: larger capacitor + half the stray)",
    )
    board.add_argument("--series", default="E12", help="capacitor series: E12 (default) or E24")
    board.add_argument(
        "--unequal", action="store_true", help="allow an unequal pair when it comes closer"
    )
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON")
    parser.set_defaults(func=run)


@dataclass(frozen=True)
class PierceOptions:
    """The ``pierce`` command's options as typed: texts still to be read, and the switches."""

    frequency: str | None
    load: str | None
    shunt: str | None
    motional: str | None
    esr: str | None
    max_drive: str | None
    stray: str | None
    gm: str | None
    swing: str | None
    node_capacitance: str | None
    series: str
    unequal: bool
    json: bool

    @classmethod
    def from_namespace(cls, args: argparse.Namespace) -> PierceOptions:
        """The options argparse read, taken once at the command's boundary."""
        return cls(
            frequency=args.frequency,
            load=args.load,
            shunt=args.shunt,
            motional=args.motional,
            esr=args.esr,
            max_drive=args.max_drive,
            stray=args.stray,
            gm=args.gm,
            swing=args.swing,
            node_capacitance=args.node_capacitance,
            series=args.series,
            unequal=args.unequal,
            json=args.json,
        )


def run(args: argparse.Namespace) -> int:
    """The ``pierce`` command: read the options once, then :func:`pierce_report`."""
    return pierce_report(PierceOptions.from_namespace(args))


def pierce_report(options: PierceOptions) -> int:
    """Analyse the circuit the options describe and print it; 1 when a check fails."""
    crystal, board = _read_inputs(options)
    analysis = analyse_pierce(crystal, board)
    if options.json:
        print(json.dumps(_as_json(crystal, board, analysis), indent=2))
    else:
        _print_report(crystal, board, analysis, default_stray=options.stray is None)
    return Exit.NO_PLAN if _warnings(crystal, analysis) else Exit.OK


def _read_inputs(options: PierceOptions) -> tuple[PierceCrystal, PierceBoard]:
    """Parse and cross-check the options; every problem becomes an InputError."""
    frequency = _required(options.frequency, "--frequency", parse_frequency)
    load = _required(options.load, "--load", parse_capacitance)
    stray = _parsed(options.stray or DEFAULT_STRAY, "--stray", parse_capacitance)
    if load <= 0:
        raise InputError("--load", f"{options.load!r} must be above zero")
    if stray >= load:
        raise InputError("--stray", f"{_pf(stray)} is at or above the load capacitance {_pf(load)}")
    series = _series(options.series)
    crystal = PierceCrystal(
        frequency=frequency,
        load=load,
        shunt=_optional(options.shunt, "--shunt", parse_capacitance),
        motional=_optional(options.motional, "--motional", _positive_capacitance),
        esr=_optional(options.esr, "--esr", _positive("resistance")),
        max_drive=_optional(options.max_drive, "--max-drive", _positive("power")),
    )
    if crystal.motional is not None and crystal.shunt is None:
        raise InputError("--motional", "needs --shunt too: pulling depends on C0")
    if crystal.esr is not None and crystal.shunt is None:
        raise InputError("--esr", "needs --shunt too: the critical gm depends on C0")
    board = PierceBoard(
        stray=stray,
        transconductance=_optional(options.gm, "--gm", _positive("transconductance")),
        swing=_optional(options.swing, "--swing", _positive("voltage")),
        node_capacitance=_optional(
            options.node_capacitance, "--node-capacitance", _positive_capacitance
        ),
        series=series,
        unequal=options.unequal,
    )
    if board.transconductance is not None and crystal.esr is None:
        raise InputError("--gm", "needs --esr and --shunt to work out the gain margin")
    return crystal, board


SERIES: dict[str, CapacitorSeries] = {"E12": "E12", "E24": "E24"}
"""The capacitor series --series names."""


def _series(text: str) -> CapacitorSeries:
    if text not in SERIES:
        raise InputError("--series", f"{text!r} is not E12 or E24")
    return SERIES[text]


def _positive(dimension: Dimension) -> Callable[[str], Fraction]:
    """A reader of a positive quantity of ``dimension`` (an ESR, a swing, a gm)."""
    return lambda text: parse_positive_quantity(text, dimension)


def _positive_capacitance(text: str) -> Fraction:
    value = parse_capacitance(text)
    if value == 0:
        raise QuantityError(f"{text!r} must be above zero")
    return value


def _required(text: str | None, option: str, parse: Callable[[str], Fraction]) -> Fraction:
    if text is None:
        raise InputError(option, "is required")
    return _parsed(text, option, parse)


def _optional(text: str | None, option: str, parse: Callable[[str], Fraction]) -> Fraction | None:
    return None if text is None else _parsed(text, option, parse)


def _parsed(text: str, option: str, parse: Callable[[str], Fraction]) -> Fraction:
    try:
        return parse(text)
    except QuantityError as error:
        raise InputError(option, str(error)) from None


def _pf(value: Fraction) -> str:
    """A capacitance in picofarads for display."""
    return f"{float(value / PICOFARAD):.4g} pF"


def _print_report(
    crystal: PierceCrystal, board: PierceBoard, analysis: PierceAnalysis, *, default_stray: bool
) -> None:
    console = Console(highlight=False)
    table = Table(
        title=f"Pierce circuit for a {format_hz(crystal.frequency)} crystal",
        box=box.SIMPLE,
        title_justify="left",
    )
    table.add_column("quantity")
    table.add_column("value", justify="right")
    table.add_column("note")
    pair = analysis.pair
    table.add_row("specified load", _pf(crystal.load), "from the crystal's datasheet")
    table.add_row(
        "stray capacitance",
        _pf(board.stray),
        "assumed: common practice, no source" if default_stray else "given",
    )
    table.add_row("exact equal pair", f"2 × {_pf(analysis.ideal_capacitor)}", "2·(CL − C_stray)")
    table.add_row(
        f"chosen {board.series} pair",
        f"{_pf(pair.first)} + {_pf(pair.second)}",
        "equal" if pair.equal else "unequal, closer to the load",
    )
    table.add_row(
        "load with chosen pair",
        _pf(pair.load),
        f"{float(analysis.load_error / PICOFARAD):+.3g} pF from specified",
    )
    if analysis.pulling is not None and analysis.sensitivity is not None:
        offset = f"{float(analysis.pulling) * 1e6:+.2f} ppm"
        table.add_row("pulling from mismatch", offset, "(Cm/2)·Δ(1/(C0 + CL))")
        sensitivity = float(analysis.sensitivity * PICOFARAD) * 1e6
        table.add_row("pulling sensitivity", f"{sensitivity:+.2f} ppm/pF", "at the built load")
    if analysis.critical_transconductance is not None:
        table.add_row(
            "critical gm",
            f"{analysis.critical_transconductance * 1e3:.4g} mA/V",
            "4·ESR·(2πF)²·(C0 + CL)²",
        )
    if analysis.gain_margin is not None:
        table.add_row(
            "gain margin",
            f"{analysis.gain_margin:.2f}",
            f"at least {MIN_GAIN_MARGIN} wanted ({OSCILLATOR_GUIDE})",
        )
    if analysis.drive_level is not None and analysis.node_capacitance is not None:
        limit = (
            f"crystal maximum {float(crystal.max_drive) * 1e6:.4g} µW"
            if crystal.max_drive is not None
            else "no maximum given"
        )
        table.add_row("drive level", f"{analysis.drive_level * 1e6:.3g} µW", limit)
        table.add_row("node capacitance", _pf(analysis.node_capacitance), "used for drive level")
    console.print(table)
    for warning in _warnings(crystal, analysis):
        console.print(f"Warning: {warning}")
    console.print(f"Caution: {CAUTION}")


def _warnings(crystal: PierceCrystal, analysis: PierceAnalysis) -> list[str]:
    warnings = []
    if analysis.starts_reliably is False:
        warnings.append(
            f"gain margin {analysis.gain_margin:.2f} is below {MIN_GAIN_MARGIN}; the oscillator "
            "will likely not start reliably. Choose a lower-ESR or lower-load crystal, or a "
            "stronger amplifier."
        )
    if (
        analysis.drive_level is not None
        and crystal.max_drive is not None
        and analysis.drive_level > crystal.max_drive
    ):
        warnings.append(
            "the drive level is above the crystal's maximum; add a series resistor or lower "
            "the swing."
        )
    return warnings


def _as_json(
    crystal: PierceCrystal, board: PierceBoard, analysis: PierceAnalysis
) -> dict[str, Any]:
    def in_pf(value: Fraction | None) -> str | None:
        return None if value is None else exact_string(value / PICOFARAD)

    return {
        "frequency_hz": exact_string(crystal.frequency),
        "specified_load_pf": in_pf(crystal.load),
        "stray_pf": in_pf(board.stray),
        "series": board.series,
        "exact_capacitor_pf": in_pf(analysis.ideal_capacitor),
        "capacitors_pf": [in_pf(analysis.pair.first), in_pf(analysis.pair.second)],
        "built_load_pf": in_pf(analysis.pair.load),
        "pulling_ppm": None if analysis.pulling is None else float(analysis.pulling) * 1e6,
        "pulling_sensitivity_ppm_per_pf": (
            None if analysis.sensitivity is None else float(analysis.sensitivity * PICOFARAD) * 1e6
        ),
        "critical_gm_a_per_v": analysis.critical_transconductance,
        "gain_margin": analysis.gain_margin,
        "minimum_gain_margin": MIN_GAIN_MARGIN,
        "starts_reliably": analysis.starts_reliably,
        "node_capacitance_pf": in_pf(analysis.node_capacitance),
        "drive_level_w": analysis.drive_level,
        "max_drive_w": None if crystal.max_drive is None else float(crystal.max_drive),
        "warnings": _warnings(crystal, analysis),
        "caution": CAUTION,
    }
