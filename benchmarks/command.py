"""What ``clockplan bench`` runs once its options are read: the cases, the tables or the JSON."""

from __future__ import annotations

import json

from rich.console import Console

from benchmarks.cases import bench_directory, case_files
from benchmarks.document import as_data
from benchmarks.measure import import_floor, machine, run_case
from benchmarks.scaling import run_scaling
from benchmarks.tables import enumerator_table, header, scaling_table, solver_table
from clockplan.errors import InputError

__all__ = ["run_benchmark", "EXIT_OK", "EXIT_MISMATCH"]

EXIT_OK, EXIT_MISMATCH = 0, 1
"""Every comparable optimum agrees; some optimum disagrees (docs/bench.md)."""


def run_benchmark(*, runs: int, cap: float, cases: str | None, scaling: bool, as_json: bool) -> int:
    """Run the chosen cases (and the scaling table); exit 1 when any optimum disagrees."""
    files = case_files(bench_directory())
    chosen = _chosen_cases(cases, list(files))
    progress = Console(stderr=True)

    def report(text: str) -> None:
        progress.print(f"  {text}", style="dim", highlight=False)

    about = machine()
    report(f"the floor: importing CP-SAT in a fresh process ({runs} runs)")
    floor = import_floor(runs)
    results = [run_case(name, files[name], runs=runs, cap=cap, report=report) for name in chosen]
    rows = run_scaling(runs=runs, report=report) if scaling else []
    mismatches = [result for result in results if result.mismatch]
    if as_json:
        document = as_data(about, runs=runs, cap=cap, floor=floor, results=results, scaling=rows)
        print(json.dumps(document, indent=2))
    else:
        console = Console()
        console.print(header(about, runs=runs, cap=cap, floor=floor), highlight=False)
        console.print(solver_table(results, floor))
        console.print(enumerator_table(results))
        if rows:
            console.print(scaling_table(rows))
        for result in mismatches:
            console.print(f"MISMATCH in {result.name}: {result.mismatch}", style="bold red")
    return EXIT_MISMATCH if mismatches else EXIT_OK


def _chosen_cases(text: str | None, known: list[str]) -> list[str]:
    """The cases ``--cases`` names, each once, in its order (all of them without it)."""
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
