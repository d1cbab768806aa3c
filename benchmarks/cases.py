"""The benchmark's cases: the boards in the repository's ``scenarios/bench/``, tiers first."""

from __future__ import annotations

from pathlib import Path

from clockplan.errors import InputError

__all__ = ["TIER_ORDER", "bench_directory", "case_files"]

TIER_ORDER = ("small", "medium", "hard")
"""The named tiers, shown first and in this order; other case files follow by name."""


def bench_directory() -> Path:
    """The clone's ``scenarios/bench/``, beside this ``benchmarks/`` folder."""
    folder = Path(__file__).resolve().parent.parent / "scenarios" / "bench"
    if not folder.is_dir():
        raise InputError("bench", f"no benchmark boards: {folder} is not a folder")
    return folder


def case_files(folder: Path) -> dict[str, Path]:
    """Every case in ``folder`` by name: the tiers first (small, medium, hard), then by name."""
    files = {path.stem: path for path in sorted(folder.glob("*.toml"))}
    tiers = [name for name in TIER_ORDER if name in files]
    return {name: files[name] for name in tiers + [n for n in files if n not in tiers]}
