"""``clockplan tick``: a divider chain down to a tick, its drift, temperature and calibration."""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, TypeVar

from rich import box
from rich.console import Console
from rich.table import Table

from clockplan.errors import InputError
from clockplan.exits import Exit
from clockplan.quantities import (
    QuantityError,
    exact_string,
    format_hz,
    format_ppm,
    format_relative,
    parse_cycles,
    parse_frequency,
    parse_number,
    parse_quantity,
    parse_relative,
    parse_temperature_range,
    parse_whole,
)
from clockplan.text_safety import quoted
from clockplan.tick import (
    DAYS_PER_MONTH,
    DAYS_PER_YEAR,
    LISTED_SETTINGS,
    TUNING_FORK_COEFFICIENT_PPM,
    TUNING_FORK_TURNOVER_C,
    CalibrationSetting,
    ChainSetting,
    Drift,
    ParabolicCurve,
    PulseCalibration,
    SymmetricBand,
    TemperatureDrift,
    TickSearch,
    best_calibration,
    drift,
    parse_chain,
    search_chain,
    suggest_chain,
    temperature_drift,
)


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``tick`` subcommand."""
    parser = subparsers.add_parser(
        "tick",
        help="divide a source down to a tick (1 Hz): exactness, drift, temperature, calibration",
        description="Divide a source frequency through a chain of divider stages down to a tick. "
        "Shows whether the tick is exact, every exact setting (or the closest ones), and the "
        "drift in seconds per day, 30-day month and 365-day year (1 ppm = 86.4 ms/day).",
        epilog='Chains: "pow2 15" (15 binary stages), "128 x 256" (fixed stages joined by x), '
        '"1..128 x 1..32768" (programmable stages, every setting is searched), '
        '"1,8,64,256,1024" (a stage with a choice: a comma separates alternatives, as '
        "everywhere). Without --chain a chain is suggested. "
        "A value starting with a minus sign needs '=': --temperature=-20..70.",
    )
    parser.add_argument("--source", metavar="FREQ", help='source frequency, e.g. "32.768 kHz"')
    parser.add_argument(
        "--chain", metavar="STAGES", help='divider stages joined by x, e.g. "pow2 7 x 1..256"'
    )
    parser.add_argument("--rate", metavar="FREQ", default="1 Hz", help='tick rate (default "1 Hz")')
    parser.add_argument(
        "--list",
        metavar="N",
        default=str(LISTED_SETTINGS),
        help=f"how many exact or closest settings to list (default {LISTED_SETTINGS}, "
        f"at most {MAX_LISTED})",
    )
    heat = parser.add_argument_group("temperature")
    heat.add_argument(
        "--curve",
        metavar="SHAPE",
        help="source temperature curve: tuning-fork (parabola k·(T − T0)²)",
    )
    heat.add_argument(
        "--coefficient",
        metavar="K",
        help=f"parabola coefficient in ppm/°C² (default {float(TUNING_FORK_COEFFICIENT_PPM)}, "
        "typical, from memory; datasheets publish -0.030 ± 0.01, -0.035 and -0.04)",
    )
    heat.add_argument(
        "--turnover",
        metavar="T0",
        help=f"parabola turnover temperature in °C (default {TUNING_FORK_TURNOVER_C}; "
        "datasheets: 25 ± 5)",
    )
    heat.add_argument("--band", metavar="PPM", help='symmetric stability band, e.g. "20 ppm"')
    heat.add_argument("--temperature", metavar="LOW..HIGH", help="range in °C, e.g. -20..70")
    trim = parser.add_argument_group("calibration by adding or skipping cycles")
    trim.add_argument("--calibrate", metavar="PPM", help='measured offset, e.g. "+12.3 ppm"')
    trim.add_argument(
        "--window",
        metavar="LENGTH",
        help='a length of time or a count of source cycles: "60 s", "1966080 cycles"',
    )
    trim.add_argument("--step-cycles", metavar="N", default="1", help="cycles per step (1)")
    trim.add_argument("--max-steps", metavar="N", help="most steps the calibration holds")
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON")
    parser.set_defaults(func=run)


@dataclass(frozen=True)
class TickOptions:
    """The ``tick`` command's options as typed: texts still to be read, and the switches."""

    source: str | None
    chain: str | None
    rate: str
    listed: str
    curve: str | None
    coefficient: str | None
    turnover: str | None
    band: str | None
    temperature: str | None
    calibrate: str | None
    window: str | None
    step_cycles: str
    max_steps: str | None
    json: bool

    @classmethod
    def from_namespace(cls, args: argparse.Namespace) -> TickOptions:
        """The options argparse read, taken once at the command's boundary."""
        return cls(
            source=args.source,
            chain=args.chain,
            rate=args.rate,
            listed=args.list,
            curve=args.curve,
            coefficient=args.coefficient,
            turnover=args.turnover,
            band=args.band,
            temperature=args.temperature,
            calibrate=args.calibrate,
            window=args.window,
            step_cycles=args.step_cycles,
            max_steps=args.max_steps,
            json=args.json,
        )


def run(args: argparse.Namespace) -> int:
    """The ``tick`` command: read the options once, then :func:`tick_report`."""
    return tick_report(TickOptions.from_namespace(args))


def tick_report(options: TickOptions) -> int:
    """Search the chain, add temperature and calibration when asked, and print the report."""
    if options.source is None:
        raise InputError("--source", 'is required; give the source frequency, like "32.768 kHz"')
    source = _parsed(options.source, "--source", parse_frequency)
    rate = _parsed(options.rate, "--rate", parse_frequency)
    listed = _whole(options.listed, "--list", minimum=1, maximum=MAX_LISTED)
    suggested = options.chain is None
    chain = (
        suggest_chain(source, rate)
        if options.chain is None
        else _parsed(options.chain, "--chain", parse_chain)
    )
    try:
        search = search_chain(source, rate, chain, listed=listed)
    except QuantityError as error:
        raise InputError("--chain", str(error)) from None
    heat = _temperature(options, search.best.error)
    calibration = _calibration(options, source)
    if options.json:
        print(json.dumps(_as_json(search, suggested, heat, calibration), indent=2))
    else:
        _print_report(search, suggested, heat, calibration)
    return Exit.OK


Parsed = TypeVar("Parsed")


def _parsed(text: str, option: str, parse: Callable[[str], Parsed]) -> Parsed:
    """``parse(text)``, a QuantityError becoming an InputError that names ``option``."""
    try:
        return parse(text)
    except QuantityError as error:
        raise InputError(option, str(error)) from None


MAX_LISTED = 1000
"""The most settings --list may ask for: a table, not an enumeration of the chain."""
MAX_COUNT = 2**62
"""The largest whole number an option takes (cycles, steps, settings listed): past it no
calibration register or list makes sense, and the arithmetic would only grow."""


def _whole(text: str, option: str, *, minimum: int, maximum: int = MAX_COUNT) -> int:
    def whole(digits: str) -> int:
        return parse_whole(digits, minimum=minimum, maximum=maximum)

    return _parsed(text, option, whole)


def _temperature(options: TickOptions, base_error: Fraction) -> TemperatureDrift | None:
    """The drift over temperature asked for by --curve or --band with --temperature."""
    behaviour: ParabolicCurve | SymmetricBand
    if options.curve is not None and options.band is not None:
        raise InputError("--band", "give either --curve or --band, not both")
    if options.curve is None and (options.coefficient is not None or options.turnover is not None):
        raise InputError("--coefficient", "and --turnover shape a --curve; add --curve tuning-fork")
    if options.curve is not None:
        if options.curve != "tuning-fork":
            raise InputError("--curve", f"{options.curve!r} is not a known curve; use tuning-fork")
        behaviour = ParabolicCurve(
            _parsed(options.coefficient, "--coefficient", parse_number)
            if options.coefficient is not None
            else TUNING_FORK_COEFFICIENT_PPM,
            _parsed(options.turnover, "--turnover", parse_number)
            if options.turnover is not None
            else TUNING_FORK_TURNOVER_C,
        )
    elif options.band is not None:
        behaviour = SymmetricBand(_parsed(options.band, "--band", parse_relative))
    elif options.temperature is not None:
        raise InputError("--temperature", "needs --curve tuning-fork or --band to say how")
    else:
        return None
    if options.temperature is None:
        raise InputError("--temperature", 'is needed with --curve or --band, e.g. "-20..70"')
    low, high = _parsed(options.temperature, "--temperature", parse_temperature_range)
    return temperature_drift(base_error, behaviour, low, high)


def _calibration(
    options: TickOptions, source: Fraction
) -> tuple[PulseCalibration, CalibrationSetting | None] | None:
    """The calibration step, and the best setting when an offset was measured."""
    if options.window is None:
        if options.calibrate is not None or options.max_steps is not None:
            raise InputError(
                "--window", 'is needed for calibration, e.g. "60 s" or "1966080 cycles"'
            )
        return None
    window = _window_cycles(options.window, source)
    steps = _whole(options.step_cycles, "--step-cycles", minimum=1)
    limit = (
        None if options.max_steps is None else _whole(options.max_steps, "--max-steps", minimum=0)
    )
    try:
        calibration = PulseCalibration(window, steps, limit)
    except QuantityError as error:
        raise InputError("--step-cycles", str(error)) from None
    if options.calibrate is None:
        return calibration, None
    measured = _parsed(
        options.calibrate, "--calibrate", lambda text: parse_quantity(text, "relative")
    )
    return calibration, best_calibration(measured, calibration)


def _window_cycles(text: str, source: Fraction) -> int:
    """The calibration window in source cycles, from cycles or from a duration."""
    too_long = f"{quoted(text)} is longer than 2**62 source cycles"
    count = _parsed(text, "--window", lambda written: parse_cycles(written, limit=MAX_COUNT))
    if count is None:
        seconds = _parsed(text, "--window", _duration_seconds)
        exact = seconds * source
        if exact > MAX_COUNT:
            raise InputError("--window", too_long)
        if exact.denominator != 1:
            raise InputError("--window", f"{quoted(text)} is not a whole number of source cycles")
        count = exact.numerator
    if count > MAX_COUNT:
        raise InputError("--window", too_long)
    if count < 2:
        raise InputError("--window", f"{quoted(text)} is shorter than two source cycles")
    return count


def _duration_seconds(text: str) -> Fraction:
    """A window written as a duration ("60 s", "2 min"), in seconds."""
    try:
        return parse_quantity(text, "time")
    except QuantityError:
        expected = '"60 s", "1966080 cycles" or "2**21 cycles"'
        raise QuantityError(f"{quoted(text)} is not a window such as {expected}") from None


def _plural(count: int, word: str) -> str:
    return f"{count} {word}{'' if count == 1 else 's'}"


def _seconds(value: Fraction) -> str:
    """A drift in seconds, with a larger unit beside it when seconds get hard to read."""
    text = f"{float(value):+.3f} s"
    return text if abs(value) < 120 else f"{text} ({_duration(value)})"


def _duration(value: Fraction) -> str:
    """A drift in the unit that reads best: seconds, minutes, hours or days."""
    seconds = float(value)
    for unit, size in (("days", 86_400), ("h", 3_600), ("min", 60)):
        if abs(seconds) >= 2 * size:
            return f"{seconds / size:+.1f} {unit}"
    return f"{seconds:+.3f} s"


def _exact_tick(tick: Fraction) -> str:
    shown = format_hz(tick)
    return shown if tick.denominator == 1 else f"{shown} (exactly {exact_string(tick)} Hz)"


def _print_report(
    search: TickSearch,
    suggested: bool,
    heat: TemperatureDrift | None,
    calibration: tuple[PulseCalibration, CalibrationSetting | None] | None,
) -> None:
    console = Console(highlight=False)
    console.print(_summary_table(search, suggested))
    if not search.exact:
        console.print(f"Not exact: {_why_not_exact(search)}")
    if search.chain.setting_count > 1:
        console.print(_settings_table(search))
    if heat is not None:
        console.print(_temperature_table(heat))
    if calibration is not None:
        console.print(_calibration_table(*calibration))
        setting = calibration[1]
        if setting is not None and setting.limited:
            console.print("Warning: the measured offset is beyond the calibration's reach.")


def _why_not_exact(search: TickSearch) -> str:
    """Why no setting is exact, and which chain would be."""
    ratio = search.source_hz / search.rate_hz
    if ratio.denominator != 1:
        return "source/tick is not a whole number, so no chain of whole dividers is exact."
    exact_chain = suggest_chain(search.source_hz, search.rate_hz).text
    return f'no setting of this chain divides by exactly {ratio}; the chain "{exact_chain}" would.'


def _summary_table(search: TickSearch, suggested: bool) -> Table:
    table = Table(
        title=f"Tick from {format_hz(search.source_hz)}", box=box.SIMPLE, title_justify="left"
    )
    table.add_column("item")
    table.add_column("value")
    chain = search.chain
    table.add_row(
        "chain",
        f"{chain.text}  ({'suggested, ' if suggested else ''}"
        f"{_plural(len(chain.stages), 'stage')}, {_plural(chain.setting_count, 'setting')})",
    )
    table.add_row("target tick", format_hz(search.rate_hz))
    table.add_row(
        "result",
        f"exact ({_plural(search.exact_count, 'setting')})" if search.exact else "not exact",
    )
    best = search.best
    table.add_row("tick", _exact_tick(best.tick_hz))
    table.add_row("division", _division_text(best))
    table.add_row("error", format_relative(best.error, signed=True))
    lapse = drift(best.error)
    table.add_row("drift per day", _seconds(lapse.per_day))
    table.add_row(f"drift per {DAYS_PER_MONTH} days", _seconds(lapse.per_month))
    table.add_row(f"drift per {DAYS_PER_YEAR} days", _seconds(lapse.per_year))
    return table


def _division_text(setting: ChainSetting) -> str:
    factors = " × ".join(map(str, setting.divisors))
    return f"{factors} = {setting.division}" if len(setting.divisors) > 1 else factors


def _settings_table(search: TickSearch) -> Table:
    title = (
        f"Exact settings: {len(search.settings)} of {search.exact_count} shown"
        if search.exact
        else f"Closest ticks: {len(search.settings)} shown"
    )
    table = Table(title=title, box=box.SIMPLE, title_justify="left")
    for number in range(1, len(search.chain.stages) + 1):
        table.add_column(f"stage {number} ÷", justify="right")
    table.add_column("total ÷", justify="right")
    table.add_column("tick")
    table.add_column("error", justify="right")
    table.add_column("settings alike", justify="right")
    for setting in search.settings:
        table.add_row(
            *map(str, setting.divisors),
            str(setting.division),
            format_hz(setting.tick_hz),
            format_relative(setting.error, signed=True),
            str(setting.settings_with_same_tick),
        )
    return table


def _temperature_table(heat: TemperatureDrift) -> Table:
    table = Table(
        title=f"Over {heat.low_c}..{heat.high_c} °C, {_behaviour_text(heat.behaviour)}",
        box=box.SIMPLE,
        title_justify="left",
    )
    table.add_column("case")
    for name in ("error", "per day", f"per {DAYS_PER_MONTH} days", f"per {DAYS_PER_YEAR} days"):
        table.add_column(name, justify="right")
    worst = heat.worst
    rows: list[tuple[str, Drift]] = [("lowest", heat.lowest), ("highest", heat.highest)]
    if heat.average is not None:
        rows.append(("average", heat.average))
    for name, lapse in rows:
        label = f"{name} (worst)" if lapse is worst else name
        table.add_row(
            label,
            format_relative(lapse.error, signed=True),
            _duration(lapse.per_day),
            _duration(lapse.per_month),
            _duration(lapse.per_year),
        )
    return table


def _behaviour_text(behaviour: ParabolicCurve | SymmetricBand) -> str:
    if isinstance(behaviour, SymmetricBand):
        return f"band ±{format_ppm(behaviour.half_width)}"
    return (
        f"parabola {float(behaviour.coefficient_ppm):g} ppm/°C² × (T − "
        f"{float(behaviour.turnover_c):g} °C)²"
    )


def _behaviour_json(behaviour: ParabolicCurve | SymmetricBand) -> dict[str, Any]:
    if isinstance(behaviour, SymmetricBand):
        return {"kind": "band", "half_width_ppm": float(behaviour.half_width) * 1e6}
    return {
        "kind": "parabola",
        "coefficient_ppm_per_c2": exact_string(behaviour.coefficient_ppm),
        "turnover_c": exact_string(behaviour.turnover_c),
    }


def _calibration_table(calibration: PulseCalibration, setting: CalibrationSetting | None) -> Table:
    table = Table(
        title=f"Calibration over a window of {calibration.window_cycles} cycles",
        box=box.SIMPLE,
        title_justify="left",
    )
    table.add_column("item")
    table.add_column("value")
    per_step = _plural(calibration.cycles_per_step, "cycle")
    table.add_row("step", f"{format_ppm(calibration.step)} ({per_step} per step)")
    reach = calibration.reach
    table.add_row(
        "reach",
        "no step limit"
        if reach is None
        else f"±{format_ppm(reach)} ({calibration.max_steps} steps)",
    )
    if setting is not None:
        table.add_row("measured offset", format_ppm(setting.measured, signed=True))
        moved = _plural(setting.steps * calibration.cycles_per_step, "cycle")
        table.add_row(
            "setting",
            "no correction needed"
            if setting.action == "none"
            else f"{setting.action} {moved} per window ({_plural(setting.steps, 'step')})",
        )
        table.add_row("correction", format_ppm(setting.correction, signed=True))
        left = drift(setting.residual)
        table.add_row(
            "residual",
            f"{format_ppm(setting.residual, signed=True)} ({_seconds(left.per_day)}/day)",
        )
    return table


def _drift_json(lapse: Drift) -> dict[str, Any]:
    return {
        "error": exact_string(lapse.error),
        "error_ppm": float(lapse.error) * 1e6,
        "seconds_per_day": float(lapse.per_day),
        f"seconds_per_{DAYS_PER_MONTH}_days": float(lapse.per_month),
        f"seconds_per_{DAYS_PER_YEAR}_days": float(lapse.per_year),
    }


def _as_json(
    search: TickSearch,
    suggested: bool,
    heat: TemperatureDrift | None,
    calibration: tuple[PulseCalibration, CalibrationSetting | None] | None,
) -> dict[str, Any]:
    report: dict[str, Any] = {
        "source_hz": exact_string(search.source_hz),
        "rate_hz": exact_string(search.rate_hz),
        "chain": [stage.text for stage in search.chain.stages],
        "chain_suggested": suggested,
        "setting_count": search.chain.setting_count,
        "exact": search.exact,
        "exact_settings": search.exact_count,
        "settings": [
            {
                "divisors": list(setting.divisors),
                "division": setting.division,
                "tick_hz": exact_string(setting.tick_hz),
                "error": exact_string(setting.error),
                "error_ppm": float(setting.error) * 1e6,
                "settings_with_same_tick": setting.settings_with_same_tick,
            }
            for setting in search.settings
        ],
        "drift": _drift_json(drift(search.best.error)),
        "temperature": None,
        "calibration": None,
    }
    if heat is not None:
        report["temperature"] = {
            "behaviour": _behaviour_json(heat.behaviour),
            "low_c": exact_string(heat.low_c),
            "high_c": exact_string(heat.high_c),
            "lowest": _drift_json(heat.lowest),
            "highest": _drift_json(heat.highest),
            "average": None if heat.average is None else _drift_json(heat.average),
            "worst": _drift_json(heat.worst),
        }
    if calibration is not None:
        trim, setting = calibration
        report["calibration"] = {
            "window_cycles": trim.window_cycles,
            "cycles_per_step": trim.cycles_per_step,
            "max_steps": trim.max_steps,
            "step_ppm": float(trim.step) * 1e6,
            "reach_ppm": None if trim.reach is None else float(trim.reach) * 1e6,
            "setting": None
            if setting is None
            else {
                "measured_ppm": float(setting.measured) * 1e6,
                "steps": setting.steps,
                "action": setting.action,
                "correction_ppm": float(setting.correction) * 1e6,
                "residual_ppm": float(setting.residual) * 1e6,
                "residual_seconds_per_day": float(drift(setting.residual).per_day),
                "limited": setting.limited,
            },
        }
    return report
