"""The errors clockplan raises; each names what was wrong and where."""

from __future__ import annotations

__all__ = [
    "ClockplanError",
    "ScenarioError",
    "InputError",
    "ModelTooLargeError",
    "InternalError",
    "ArgumentTypeError",
]


class ClockplanError(Exception):
    """Base of every error clockplan raises on purpose."""


class ScenarioError(ValueError, ClockplanError):
    """A scenario file is malformed: names the file, the key path and what was expected."""

    def __init__(self, source: str, key: str, problem: str) -> None:
        self.source = source
        self.key = key
        self.problem = problem
        super().__init__(str(self))

    def __str__(self) -> str:
        where = f"{self.source}: {self.key}" if self.key else self.source
        return f"{where}: {self.problem}"


class InputError(ValueError, ClockplanError):
    """A command-line value is wrong: names the option and what was expected."""

    def __init__(self, option: str, problem: str) -> None:
        self.option = option
        self.problem = problem
        super().__init__(f"{option}: {problem}")


class ModelTooLargeError(OverflowError, ClockplanError):
    """A scenario would overflow 64-bit integers or explode the enumeration."""


class InternalError(RuntimeError, ClockplanError):
    """A bug in clockplan (the solver refused the model, a proved stage left no plan): never
    the user's fault, and never reported as "no plan fits"."""


class ArgumentTypeError(TypeError, ClockplanError):
    """A library function was given an argument of the wrong type (a number for a path …)."""
