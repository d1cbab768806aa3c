"""The search for clock plans with OR-Tools CP-SAT: the model and the ranking loop."""

from clockplan.result import RankedPlan, SearchResult, Status
from clockplan.solve.search import search

__all__ = ["RankedPlan", "SearchResult", "Status", "search"]
