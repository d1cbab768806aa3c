"""``clockplan tick``: a divider chain down to a tick, its drift, temperature and calibration."""

from __future__ import annotations

import argparse
import json
import re
from collections.abc import Callable
from fractions import Fraction
from typing import Any

from rich import box
from rich.console import Console
from rich.table import Table

from clockplan.errors import InputError
from clockplan.quantities import (
    QuantityError,
    check_plain_text,
    exact_string,
    format_hz,
    format_ppm,
    format_relative,
    parse_frequency,
    parse_number,
    parse_quantity,
    parse_relative,
    parse_temperature_range,
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

_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)"
_CYCLES = re.compile(r"^\s*(?:2\s*\*\*\s*(\d+)|(\d+))\s*cycles?\s*$", re.ASCII)
_DURATION = re.compile(rf"^\s*({_NUMBER}(?:[eE][+-]?\d+)?)\s*(s|min|h)\s*$", re.ASCII)
_SECONDS_PER_UNIT = {"s": 1, "min": 60, "h": 3600}


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``tick`` subcommand."""
    parser = subparsers.add_parser(
        "tick",
        help="divide a source down to a tick (1 Hz): exactness, drift, temperature, calibration",
        description="Divide a source frequency through a chain of divider stages down to a tick. "
        "Shows whether the tick is exact, every exact setting (or the closest ones), and the "
        "drift in seconds per day, 30-day month and 365-day year (1 ppm = 86.4 ms/day).",
        epilog='Chains: "pow2 15" (15 binary stages), "128, 256" (fixed stages), '
        '"1..128, 1..32768" (programmable stages, every setting is searched), '
        '"1|8|64|256|1024" (a stage with a choice). Without --chain a chain is suggested. '
        "A value starting with a minus sign needs '=': --temperature=-20..70.",
    )
    parser.add_argument("--source", metavar="FREQ", help='source frequency, e.g. "32.768 kHz"')
    parser.add_argument("--chain", metavar="STAGES", help="divider stages, separated by commas")
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
    trim.add_argument("--window", metavar="LENGTH", help='"2**20 cycles" or "32 s"')
    trim.add_argument("--step-cycles", metavar="N", default="1", help="cycles per step (1)")
    trim.add_argument("--max-steps", metavar="N", help="most steps the calibration holds")
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON")
    parser.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Search the chain, add temperature and calibration when asked, and print the report."""
    if args.source is None:
        raise InputError("--source", 'is required; give the source frequency, like "32.768 kHz"')
    source = _parsed(args.source, "--source", parse_frequency)
    rate = _parsed(args.rate, "--rate", parse_frequency)
    listed = _whole(args.list, "--list", minimum=1, maximum=MAX_LISTED)
    suggested = args.chain is None
    chain = (
        suggest_chain(source, rate) if suggested else _parsed(args.chain, "--chain", parse_chain)
    )
    try:
        search = search_chain(source, rate, chain, listed=listed)
    except QuantityError as error:
        raise InputError("--chain", str(error)) from None
    heat = _temperature(args, search.best.error)
    calibration = _calibration(args, source)
    if args.json:
        print(json.dumps(_as_json(search, suggested, heat, calibration), indent=2))
    else:
        _print_report(search, suggested, heat, calibration)
    return 0


def _parsed(text: str, option: str, parse: Callable[[str], Any]) -> Any:
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
    digits = text.strip()
    if not (digits.isascii() and digits.isdigit()) or len(digits) > 19 or int(digits) < minimum:
        raise InputError(option, f"{quoted(text)} is not a whole number of at least {minimum}")
    if int(digits) > maximum:
        raise InputError(option, f"{quoted(text)} is more than {maximum}")
    return int(digits)


def _temperature(args: argparse.Namespace, base_error: Fraction) -> TemperatureDrift | None:
    """The drift over temperature asked for by --curve or --band with --temperature."""
    behaviour: ParabolicCurve | SymmetricBand
    if args.curve is not None and args.band is not None:
        raise InputError("--band", "give either --curve or --band, not both")
    if args.curve is None and (args.coefficient is not None or args.turnover is not None):
        raise InputError("--coefficient", "and --turnover shape a --curve; add --curve tuning-fork")
    if args.curve is not None:
        if args.curve != "tuning-fork":
            raise InputError("--curve", f"{args.curve!r} is not a known curve; use tuning-fork")
        behaviour = ParabolicCurve(
            _parsed(args.coefficient, "--coefficient", parse_number)
            if args.coefficient is not None
            else TUNING_FORK_COEFFICIENT_PPM,
            _parsed(args.turnover, "--turnover", parse_number)
            if args.turnover is not None
            else TUNING_FORK_TURNOVER_C,
        )
    elif args.band is not None:
        behaviour = SymmetricBand(_parsed(args.band, "--band", parse_relative))
    elif args.temperature is not None:
        raise InputError("--temperature", "needs --curve tuning-fork or --band to say how")
    else:
        return None
    if args.temperature is None:
        raise InputError("--temperature", 'is needed with --curve or --band, e.g. "-20..70"')
    low, high = _temperature_range(args.temperature)
    return temperature_drift(base_error, behaviour, low, high)


def _temperature_range(text: str) -> tuple[Fraction, Fraction]:
    try:
        return parse_temperature_range(text)
    except QuantityError as error:
        raise InputError("--temperature", str(error)) from None


def _calibration(
    args: argparse.Namespace, source: Fraction
) -> tuple[PulseCalibration, CalibrationSetting | None] | None:
    """The calibration step, and the best setting when an offset was measured."""
    if args.window is None:
        if args.calibrate is not None or args.max_steps is not None:
            raise InputError("--window", 'is needed for calibration, e.g. "2**20 cycles" or "32 s"')
        return None
    window = _window_cycles(args.window, source)
    steps = _whole(args.step_cycles, "--step-cycles", minimum=1)
    limit = None if args.max_steps is None else _whole(args.max_steps, "--max-steps", minimum=0)
    try:
        calibration = PulseCalibration(window, steps, limit)
    except QuantityError as error:
        raise InputError("--step-cycles", str(error)) from None
    if args.calibrate is None:
        return calibration, None
    measured = _parsed(args.calibrate, "--calibrate", lambda text: parse_quantity(text, "relative"))
    return calibration, best_calibration(measured, calibration)


def _window_cycles(text: str, source: Fraction) -> int:
    """The calibration window in source cycles, from cycles or from a duration."""
    check = _parsed(text, "--window", check_plain_text)
    cycles = _CYCLES.match(check)
    too_long = f"{quoted(text)} is longer than 2**62 source cycles"
    if cycles:
        power, plain = cycles.groups()
        if len((power or plain).lstrip("0")) > 19:
            raise InputError("--window", too_long)
        count = 2 ** int(power) if power and int(power) <= 62 else int(plain or MAX_COUNT + 1)
    else:
        duration = _DURATION.match(check)
        if duration is None:
            expected = '"2**20 cycles", "1048576 cycles" or "32 s"'
            raise InputError("--window", f"{quoted(text)} is not a window such as {expected}")
        seconds = _parsed(duration.group(1), "--window", parse_number)
        exact = seconds * _SECONDS_PER_UNIT[duration.group(2)] * source
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
