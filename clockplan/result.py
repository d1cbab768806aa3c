"""What a search returns: the status, the ranked plans, the stages proved, the explanation.

These are plain values. Nothing here imports a solver, so every output (tables, JSON,
header, pictures) can read a result without loading OR-Tools.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum
from fractions import Fraction

from clockplan._frozen import frozen
from clockplan.evaluate import Evaluation
from clockplan.exits import Exit
from clockplan.plan import Plan
from clockplan.scenario import Scenario

__all__ = [
    "Status",
    "STATUS_WORDS",
    "Stage",
    "RankedPlan",
    "SearchResult",
    "Relaxation",
    "Explanation",
]


class Status(StrEnum):
    """What the solver could prove."""

    OPTIMAL = "optimal"
    """Proved: every stage of the ranking is proved, no plan is better."""
    FEASIBLE = "feasible"
    """A plan, but the time limit (or Ctrl-C) stopped the proof of some stage."""
    INFEASIBLE = "infeasible"
    """Proved: no plan meets every limit and allowance."""
    UNKNOWN = "unknown"
    """The time limit stopped the search before any plan or proof."""


STATUS_WORDS = {
    Status.OPTIMAL: "optimal (every stage proved)",
    Status.FEASIBLE: "not proved: the time limit stopped a stage",
    Status.INFEASIBLE: "no plan fits (proved)",
    Status.UNKNOWN: "unknown: the time limit came before any plan",
}
"""What each status means, as every output words it ("optimal" only when proved)."""


@dataclass(frozen=True)
class Stage:
    """One stage of the ranking for one plan: what it settles and whether it was proved."""

    name: str
    """The criterion in words, as printed: "worst share", "fastest clocks", …"""
    proved: bool
    """Whether CP-SAT proved this stage's optimum (False: the time limit or Ctrl-C cut it)."""
    value: int | None = None
    """The stage's optimum in the model's own integer steps, when it was reached."""


@dataclass(frozen=True)
class RankedPlan:
    """One plan of the ranking with its exact evaluation and the stages it was proved on."""

    rank: int
    plan: Plan
    evaluation: Evaluation
    status: Status
    stages: tuple[Stage, ...]
    """Every stage of the ranking order, in order; all proved when ``status`` is optimal."""
    choice: Mapping[str, Fraction]
    """The oscillators this plan uses and their frequencies: what makes the rank distinct."""

    def __post_init__(self) -> None:
        object.__setattr__(self, "choice", frozen(self.choice))

    @property
    def worst_steps(self) -> int | None:
        """The worst share as the ranking counts it, in steps of 1/10 000 (0 when no rate has a
        tolerance; None when the stage was not reached)."""
        for stage in self.stages:
            if stage.name == "worst share":
                return stage.value
        return 0

    @property
    def unproved(self) -> tuple[str, ...]:
        """The stages the time limit (or Ctrl-C) stopped before their proof."""
        return tuple(stage.name for stage in self.stages if not stage.proved)


@dataclass(frozen=True)
class SearchResult:
    """The ranked plans and what the search could prove about them."""

    scenario: Scenario
    status: Status
    """Status of rank 1 (the answer to "what is the best plan?")."""
    plans: tuple[RankedPlan, ...]
    order: tuple[str, ...]
    """The ranking order used, most important first (stage names)."""
    elapsed: float
    """Seconds the search took, model building included."""
    time_limited: bool
    """Whether the time limit cut any part of the search short."""
    exhausted: bool = False
    """Whether the ranks ran out: no further oscillator choice has a plan (proved)."""
    interrupted: bool = False
    """Whether Ctrl-C stopped the search; the plans are the best found until then."""
    precisions: Mapping[str, int] | None = None
    """Each rate's error enters the ranking rounded up to 10**-digits."""
    bounded_errors: frozenset[str] = frozenset()
    """Rates whose error the model bounds from above (its exact value would overflow 64 bits)."""
    rounded_limits: frozenset[str] = frozenset()
    """Rates whose allowance the model holds slightly tighter than written (64-bit room)."""
    explanation: Explanation | None = None
    """Why no plan fits, when the search proved that and an explanation was asked for."""
    closest: bool = False
    """Whether the allowances were let go: the plans come as close as they can, and their
    evaluations say which rates fail."""

    @property
    def proved(self) -> bool:
        """Whether every stage of every ranked plan (and the end of the ranks) was proved."""
        return (
            not self.time_limited
            and not self.interrupted
            and all(ranked.status is Status.OPTIMAL for ranked in self.plans)
        )

    @property
    def exit_status(self) -> Exit:
        """The exit status of a search: interrupted, no plan (proved), not proved, or done."""
        if self.interrupted:
            return Exit.INTERRUPTED
        if self.status is Status.INFEASIBLE:
            return Exit.NO_PLAN
        if not self.plans or not self.proved:
            return Exit.NOT_PROVED
        return Exit.OK if self.plans[0].evaluation.feasible else Exit.NO_PLAN

    @property
    def precision(self) -> int:
        """The coarsest rounding of any rate's error in the ranking, in decimal digits."""
        return min((self.precisions or {}).values(), default=9)


@dataclass(frozen=True)
class Relaxation:
    """What happens when one limit of the conflict is let go."""

    limit: str
    """The limit in words."""
    advice: str
    """How far the limit must move, with the numbers of the closest plan."""
    plan: Plan | None
    evaluation: Evaluation | None
    proved: bool = True
    """Whether the least relaxation was proved (False: an upper bound, or not reached)."""


@dataclass(frozen=True)
class Explanation:
    """A conflicting set of limits and one relaxation per member."""

    conflict: tuple[str, ...]
    """The limits, in words, that cannot all hold."""
    minimal: bool
    """Whether the deletion pass finished (every member is needed for the conflict)."""
    relaxations: tuple[Relaxation, ...]
    beyond_sources: tuple[str, ...] = ()
    """Rates that no setting can save: every source that may feed them has a budget
    larger than their allowance (each alone is a conflict; all are listed here)."""
    time_limited: bool = False
    """Whether the time limit stopped some step of the explanation."""
