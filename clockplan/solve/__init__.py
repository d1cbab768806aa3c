"""The search for clock plans with OR-Tools CP-SAT: the model and the ranking loop."""

from clockplan.solve.search import RankedPlan, SearchResult, Status, search

__all__ = ["RankedPlan", "SearchResult", "Status", "search"]
