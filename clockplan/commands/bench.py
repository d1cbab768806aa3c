"""``clockplan bench``: the options of the benchmark, which runs from a clone of the repository.

The benchmark itself (the harness, the brute-force enumerator, the tables) is the
repository's top-level ``benchmarks`` package, beside ``clockplan/`` and outside the wheel;
it is imported only when the command runs.
"""

from __future__ import annotations

import argparse
import math
import sys
from importlib import import_module
from pathlib import Path
from types import ModuleType

from clockplan.errors import InputError

MIN_RUNS = 3
"""Fewest timed runs whose median is reported."""
DEFAULT_CAP = 20.0
"""Seconds the enumerator may spend on one case."""
NOT_IN_A_CLONE = (
    "runs only from a clone of the clockplan repository (the benchmark and its boards are not "
    "installed with the package): in the clone's root, run 'python -m clockplan bench'"
)


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
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
    """Check the options, find the clone's benchmark and run it (exit 1 on a mismatch)."""
    if args.runs < MIN_RUNS:
        raise InputError("--runs", f"{args.runs} is below {MIN_RUNS}; a median needs 3 runs")
    if not args.cap > 0 or math.isinf(args.cap):
        raise InputError("--cap", f"{args.cap} is not a positive number of seconds")
    benchmark = _clone_benchmark(Path(__file__).resolve().parents[2])
    return int(
        benchmark.run_benchmark(
            runs=args.runs,
            cap=args.cap,
            cases=args.cases,
            scaling=args.scaling,
            as_json=args.json,
        )
    )


def _clone_benchmark(clone: Path) -> ModuleType:
    """``benchmarks.command`` of the clone this package was loaded from.

    A clone holds ``benchmarks/`` and ``scenarios/bench/`` beside ``clockplan/``; the
    console script does not put the clone on ``sys.path``, so it is added here. Installed
    from a wheel, the package's parent holds neither, and the command says where it runs.
    """
    if (
        not (clone / "benchmarks" / "__init__.py").is_file()
        or not (clone / "scenarios" / "bench").is_dir()
    ):
        raise InputError("bench", NOT_IN_A_CLONE)
    if str(clone) not in sys.path:
        sys.path.insert(0, str(clone))
    return import_module("benchmarks.command")
