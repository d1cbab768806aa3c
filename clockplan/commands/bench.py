"""``clockplan bench``: the benchmark tables (solver against the brute-force enumerator)."""

from __future__ import annotations

import argparse
import json
import math
from typing import Any

from rich import box
from rich.console import Console
from rich.table import Table

from clockplan.bench import (
    MIN_RUNS,
    CaseResult,
    Machine,
    ScalingRow,
    bench_directory,
    case_files,
    dimension_value,
    machine,
    run_case,
    run_scaling,
)
from clockplan.brute import SHARE_STEPS
from clockplan.errors import InputError

EXIT_OK, EXIT_MISMATCH = 0, 1
DEFAULT_CAP = 20.0


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    """Add the ``bench`` subcommand."""
    parser = subparsers.add_parser(
        "bench",
        help="benchmark the search against a brute-force enumerator (run in the repository)",
        description="Time the search on the boards in scenarios/bench/ (median of several "
        "runs), the whole 'clockplan plan' process and its peak memory, and run a "
        "vectorised brute-force enumerator on each board with a time cap: its optimum "
        "must equal the search's wherever it finishes (exit 1 when not).",
    )
    parser.add_argument(
        "--runs",
        type=int,
        default=MIN_RUNS,
        metavar="N",
        help=f"timed runs per measurement, median reported (at least {MIN_RUNS}; "
        f"default {MIN_RUNS})",
    )
    parser.add_argument(
        "--cap",
        type=float,
        default=DEFAULT_CAP,
        metavar="SECONDS",
        help=f"time cap of the enumerator per case (default {DEFAULT_CAP:g})",
    )
    parser.add_argument(
        "--cases",
        metavar="NAMES",
        help="comma-separated case names (default: every file in scenarios/bench/)",
    )
    parser.add_argument(
        "--scaling",
        action="store_true",
        help="also time the search on generated boards of growing size",
    )
    parser.add_argument(
        "--json", action="store_true", help="print the results as JSON on standard output"
    )
    parser.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Run the chosen cases (and the scaling table); exit 1 when any optimum disagrees."""
    if args.runs < MIN_RUNS:
        raise InputError("--runs", f"{args.runs} is below {MIN_RUNS}; a median needs 3 runs")
    if not args.cap > 0 or math.isinf(args.cap):
        raise InputError("--cap", f"{args.cap} is not a positive number of seconds")
    files = case_files(bench_directory())
    chosen = _chosen_cases(args.cases, list(files))
    progress = Console(stderr=True)

    def report(text: str) -> None:
        progress.print(f"  {text}", style="dim", highlight=False)

    about = machine()
    results = [
        run_case(name, files[name], runs=args.runs, cap=args.cap, report=report) for name in chosen
    ]
    scaling = run_scaling(runs=args.runs, report=report) if args.scaling else []
    mismatches = [result for result in results if result.mismatch]
    if args.json:
        print(json.dumps(_as_data(about, args, results, scaling), indent=2))
    else:
        console = Console()
        console.print(_header(about, args), highlight=False)
        console.print(_solver_table(results))
        console.print(_enumerator_table(results))
        if scaling:
            console.print(_scaling_table(scaling))
        for result in mismatches:
            console.print(f"MISMATCH in {result.name}: {result.mismatch}", style="bold red")
    return EXIT_MISMATCH if mismatches else EXIT_OK


def _chosen_cases(text: str | None, known: list[str]) -> list[str]:
    if not known:
        raise InputError("--cases", "scenarios/bench/ holds no case file (*.toml)")
    if text is None:
        return known
    names = [name.strip() for name in text.split(",") if name.strip()]
    if not names:
        raise InputError("--cases", "names no case; give names like small,medium")
    for name in names:
        if name not in known:
            raise InputError("--cases", f"{name!r} is not a case; the cases: {', '.join(known)}")
    return list(dict.fromkeys(names))


# -- text ------------------------------------------------------------------------------------


def _header(about: Machine, args: argparse.Namespace) -> str:
    return (
        f"clockplan bench: {about.cores} cores, Python {about.python}, OR-Tools {about.ortools}, "
        f"numpy {about.numpy}, {about.system}\n"
        f"search and process: medians of {args.runs} runs; memory: peak of a search in a child "
        f"process; enumerator capped at {args.cap:g} s per case (~: projected past the cap)"
    )


def _solver_table(results: list[CaseResult]) -> Table:
    table = Table(title="Search", box=box.SIMPLE_HEAD, title_justify="left")
    table.add_column("case")
    table.add_column("status")
    table.add_column("optimum (key)", justify="right")
    table.add_column("search", justify="right")
    table.add_column("process", justify="right")
    table.add_column("memory", justify="right")
    table.add_column("raw space", justify="right")
    for result in results:
        table.add_row(
            result.name,
            str(result.status),
            _optimum(result.worst_steps),
            _seconds(result.solve_median),
            _seconds(result.process_median),
            f"{result.peak_rss_bytes / 2**20:.0f} MiB",
            _count(result.raw_combinations),
        )
    return table


def _enumerator_table(results: list[CaseResult]) -> Table:
    table = Table(title="Brute-force enumerator", box=box.SIMPLE_HEAD, title_justify="left")
    table.add_column("case")
    table.add_column("time", justify="right")
    table.add_column("checked/tree", justify="right")
    table.add_column("rate", justify="right")
    table.add_column("optimum", justify="right")
    table.add_column("speed-up", justify="right")
    table.add_column("optima")
    for result in results:
        enumeration = result.enumeration
        if enumeration.finished:
            time_text = _seconds(enumeration.elapsed)
            found = _optimum(enumeration.best_key) if enumeration.best_key is not None else "none"
            faster = f"{result.speedup:,.0f}×" if result.speedup >= 10 else f"{result.speedup:.2g}×"
        else:
            time_text = f"~{_seconds(enumeration.projected)}"
            found = (
                f"so far {_optimum(enumeration.best_key)}"
                if enumeration.best_key is not None
                else "none yet"
            )
            faster = f"~{_ratio(result.speedup)}×"
        table.add_row(
            result.name,
            time_text,
            f"{_count(enumeration.checked)}/{_count(enumeration.total)}",
            f"{_count(round(enumeration.rate))}/s",
            found,
            faster,
            _verdict(result),
        )
    return table


def _verdict(result: CaseResult) -> str:
    if result.mismatch:
        return "MISMATCH"
    enumeration = result.enumeration
    if enumeration.finished and not enumeration.capped:
        return "equal"
    if enumeration.capped:
        return "not proved (re-check cap)"
    return "not compared"


def _scaling_table(rows: list[ScalingRow]) -> Table:
    table = Table(
        title="Scaling (generated boards; one dimension varied from 4 peripherals, 1 PLL, "
        "integer-N, 40 candidates)",
        box=box.SIMPLE_HEAD,
        title_justify="left",
    )
    table.add_column("varied")
    table.add_column("value", justify="right")
    table.add_column("raw space", justify="right")
    table.add_column("search", justify="right")
    table.add_column("status")
    table.add_column("optimum (key)", justify="right")
    for row in rows:
        median = row.solve_median
        table.add_row(
            row.dimension,
            str(dimension_value(row.dimension, row.point)),
            _count(row.raw_combinations),
            _seconds(median) if median is not None else "-",
            row.status,
            _optimum(row.worst_steps),
        )
    return table


def _optimum(steps: int | None) -> str:
    if steps is None:
        return "-"
    return f"{100 * steps / SHARE_STEPS:.2f} % ({steps})"


_LONG = ((365.25 * 86400, "years"), (86400, "days"), (3600, "hours"))


def _seconds(value: float) -> str:
    if math.isinf(value):
        return "∞"
    if value < 1:
        return f"{value * 1000:.0f} ms"
    if value < 1000:
        return f"{value:.2f} s"
    unit, name = next(((unit, name) for unit, name in _LONG if value >= unit), (1, "s"))
    amount = value / unit
    return f"{amount:.3g} {name}" if amount < 1000 else f"{_count(round(amount))} {name}"


def _ratio(value: float) -> str:
    if math.isinf(value):
        return "∞"
    return f"{value:,.0f}" if value < 1e6 else f"{value:.1e}"


def _count(value: int) -> str:
    """A count, exact below a million, else as mantissa and exponent (it may exceed floats)."""
    if value < 1_000_000:
        return str(value)
    exponent = len(str(value)) - 1
    mantissa = (value + 5 * 10 ** (exponent - 3)) // 10 ** (exponent - 2)  # 3 digits, rounded
    if mantissa >= 1000:
        mantissa, exponent = mantissa // 10, exponent + 1
    return f"{mantissa // 100}.{mantissa % 100:02d}e{exponent}"


# -- JSON ------------------------------------------------------------------------------------


def _as_data(
    about: Machine, args: argparse.Namespace, results: list[CaseResult], scaling: list[ScalingRow]
) -> dict[str, Any]:
    return {
        "machine": {
            "cores": about.cores,
            "python": about.python,
            "ortools": about.ortools,
            "numpy": about.numpy,
            "system": about.system,
        },
        "runs": args.runs,
        "enumerator_cap_s": args.cap,
        "cases": [_case_data(result) for result in results],
        "scaling": [_scaling_data(row) for row in scaling],
    }


def _case_data(result: CaseResult) -> dict[str, Any]:
    enumeration = result.enumeration
    return {
        "name": result.name,
        "file": result.file,
        "status": str(result.status),
        "optimum_key": result.worst_steps,
        "optimum_share": None if result.worst_steps is None else result.worst_steps / SHARE_STEPS,
        "solve_s": list(result.solve_seconds),
        "solve_median_s": result.solve_median,
        "process_s": list(result.process_seconds),
        "process_median_s": result.process_median,
        "peak_rss_bytes": result.peak_rss_bytes,
        "raw_combinations": str(result.raw_combinations),
        "enumerator": {
            "finished": enumeration.finished,
            "best_key": enumeration.best_key,
            "checked": str(enumeration.checked),
            "total": str(enumeration.total),
            "elapsed_s": enumeration.elapsed,
            "projected_s": None if math.isinf(enumeration.projected) else enumeration.projected,
            "rate_per_s": enumeration.rate,
            "rechecked": enumeration.rechecked,
            "recheck_capped": enumeration.capped,
        },
        "speedup": None if math.isinf(result.speedup) else result.speedup,
        "mismatch": result.mismatch,
    }


def _scaling_data(row: ScalingRow) -> dict[str, Any]:
    return {
        "varied": row.dimension,
        "peripherals": row.point.peripherals,
        "plls": row.point.plls,
        "fraction_bits": row.point.fraction_bits,
        "candidates": row.point.candidates,
        "raw_combinations": str(row.raw_combinations),
        "solve_s": list(row.solve_seconds),
        "solve_median_s": row.solve_median,
        "status": row.status,
        "optimum_key": row.worst_steps,
    }
