"""Reading one TOML table with key paths, unknown-key checks and "did you mean" hints."""

from __future__ import annotations

import difflib
import json
import re
from collections.abc import Callable
from typing import Any, TypeVar, overload

from clockplan.errors import ScenarioError
from clockplan.quantities import QuantityError
from clockplan.text_safety import MAX_QUOTED, quoted, shorten

__all__ = ["Fields", "MISSING"]

T = TypeVar("T")
D = TypeVar("D")


class _Missing:
    def __repr__(self) -> str:
        return "MISSING"


MISSING: Any = _Missing()
"""Marks a key that has no default: leaving it out is an error."""

MAX_KEY_SHOWN = 100
"""The most characters of one key a key path shows; longer ones are cut (and quoted)."""

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
"""A key TOML writes without quotes; any other key is shown quoted (and on one line)."""


class Fields:
    """One table of a scenario file; each ``take`` names the key path in its errors."""

    def __init__(self, table: object, *, file: str, path: str) -> None:
        if not isinstance(table, dict):
            raise ScenarioError(file, path, f"expected a table, got {_describe(table)}")
        self.table: dict[str, object] = table
        self.file = file
        self.path = path
        self._used: set[str] = set()

    def key(self, name: str) -> str:
        """The dotted key path of ``name`` inside this table, quoted as TOML would need it."""
        if len(name) > MAX_KEY_SHOWN:  # a name of megabytes is cut, and quoted to show it is
            written = json.dumps(shorten(name, MAX_KEY_SHOWN))
        else:
            written = name if _BARE_KEY.fullmatch(name) else json.dumps(name)
        return f"{self.path}.{written}" if self.path else written

    def error(self, name: str, problem: str) -> ScenarioError:
        """An error located at ``name`` in this table."""
        return ScenarioError(self.file, self.key(name), problem)

    def has(self, name: str) -> bool:
        """Whether the file gives ``name``."""
        return name in self.table

    @overload
    def take(self, name: str, parse: Callable[[Any], T]) -> T: ...
    @overload
    def take(self, name: str, parse: Callable[[Any], T], default: D) -> T | D: ...
    def take(self, name: str, parse: Callable[[Any], T], default: object = MISSING) -> object:
        """Read ``name`` through ``parse``; a parse failure becomes a located error."""
        self._used.add(name)
        if name not in self.table:
            if default is MISSING:
                strays = [key for key in self.table if key not in self._used]
                short = [key for key in strays if len(key) <= MAX_QUOTED]
                close = difflib.get_close_matches(name, short, n=1, cutoff=0.6)
                found = f" (found {quoted(close[0])}: misspelt?)" if close else ""
                raise self.error(name, f"is missing{found}")
            return default
        try:
            return parse(self.table[name])
        except QuantityError as error:
            raise self.error(name, str(error)) from None

    def take_str(self, name: str, default: Any = MISSING, *, choices: tuple[str, ...] = ()) -> str:
        """Read a string, optionally one of ``choices`` (with a suggestion when close)."""
        value = self.take(name, _identity, default)
        if not isinstance(value, str):
            raise self.error(name, f"expected a string, got {_describe(value)}")
        if choices and value not in choices:
            raise self.error(
                name, f"{quoted(value)} is not one of {', '.join(choices)}{hint(value, choices)}"
            )
        return value

    def take_int(
        self, name: str, default: Any = MISSING, *, minimum: int = 0, maximum: int | None = None
    ) -> int:
        """Read a whole number inside ``minimum..maximum``."""
        value = self.take(name, _identity, default)
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(name, f"expected a whole number, got {_describe(value)}")
        if value < minimum or (maximum is not None and value > maximum):
            top = "" if maximum is None else f"..{maximum}"
            raise self.error(name, f"{value} is outside {minimum}{top}")
        return value

    def sub(self, name: str) -> Fields:
        """The sub-table ``name`` as its own :class:`Fields`."""
        self._used.add(name)
        return Fields(self.table[name], file=self.file, path=self.key(name))

    def finish(self) -> None:
        """Refuse keys nobody asked for: they are typos or features we do not have."""
        for name in self.table:
            if name not in self._used:
                raise self.error(name, f"is not a known key here{hint(name, tuple(self._used))}")


def _identity(value: T) -> T:
    return value


def hint(word: str, known: tuple[str, ...] | list[str]) -> str:
    """A "; did you mean 'x'?" suffix when ``word`` is close to a known word."""
    if len(word) > MAX_QUOTED:  # no typo is that long, and comparing it would take long
        return ""
    close = difflib.get_close_matches(word, list(known), n=1, cutoff=0.6)
    return f"; did you mean {quoted(close[0])}?" if close else ""


def _describe(value: object) -> str:
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return f"{type(value).__name__} {quoted(value)}"
