"""A mapping that cannot change after it is made, for the fields of frozen values.

A frozen dataclass holding a plain dict can still have the dict changed under it; this
one refuses every change, compares equal to a dict with the same items, pickles (for
process pools) and serialises to JSON as a dict.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any, NoReturn, TypeVar

__all__ = ["FrozenDict", "frozen"]

K = TypeVar("K")
V = TypeVar("V")


class FrozenDict(dict[K, V]):
    """A dict that refuses every change."""

    def _refuse(self, *_: object, **__: object) -> NoReturn:
        raise TypeError("this mapping belongs to a frozen value and cannot change")

    __setitem__ = __delitem__ = _refuse
    clear = pop = popitem = setdefault = update = _refuse
    __ior__ = _refuse

    def __reduce__(self) -> tuple[Any, ...]:
        return (FrozenDict, (dict(self),))

    def __hash__(self) -> int:  # type: ignore[override]
        return hash(frozenset(self.items()))


def frozen(items: Mapping[K, V] | Iterable[tuple[K, V]]) -> FrozenDict[K, V]:
    """``items`` as a FrozenDict (itself when it already is one)."""
    return items if isinstance(items, FrozenDict) else FrozenDict(items)
