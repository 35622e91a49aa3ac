"""The one place where drc remembers results between calls.

A board repeats itself: the same part values, thresholds, designators and
circuit shapes recur in thousands of stages, so a few pure functions keep
what they computed. Every such memory is one of the two helpers below, so
that all of them share one rule (bounded: cleared whole when full, which is
cheap and keeps a long-lived process from growing) and one switch
(`clear_caches()`, for tests and for a host application that reloads data).

Keys are values, never object identities: an `id()` can be reused by a new
object once the old one is gone, and a memo keyed by it would then answer
for the wrong object.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Hashable
from typing import Generic, ParamSpec, TypeVar

K = TypeVar("K", bound=Hashable)
V = TypeVar("V")
P = ParamSpec("P")
R = TypeVar("R")

_MEMOS: list[Memo] = []
_FUNCTIONS: list[Callable[[], None]] = []


class Memo(Generic[K, V]):
    """A bounded dictionary of remembered values for hot paths.

    `get` answers None when the key is unknown (store None-able results
    wrapped, or use `memoized`). `put` clears the whole memo before it would
    exceed `limit` entries.
    """

    __slots__ = ("name", "limit", "_data")

    def __init__(self, name: str, limit: int) -> None:
        if limit < 1:
            raise ValueError("a memo holds at least one entry")
        self.name = name
        self.limit = limit
        self._data: dict[K, V] = {}
        _MEMOS.append(self)

    def get(self, key: K) -> V | None:
        return self._data.get(key)

    def put(self, key: K, value: V) -> V:
        data = self._data
        if len(data) >= self.limit:
            data.clear()
        data[key] = value
        return value

    def __contains__(self, key: object) -> bool:
        return key in self._data

    def __len__(self) -> int:
        return len(self._data)

    def clear(self) -> None:
        self._data.clear()


def memoized(limit: int) -> Callable[[Callable[P, R]], Callable[P, R]]:
    """Decorator: remember a pure function's results by its (hashable) arguments.

    A bounded `functools.lru_cache`, registered so that `clear_caches()`
    empties it.
    """

    def wrap(function: Callable[P, R]) -> Callable[P, R]:
        cached = functools.lru_cache(maxsize=limit)(function)
        _FUNCTIONS.append(cached.cache_clear)
        return cached  # type: ignore[return-value]

    return wrap


def clear_caches() -> None:
    """Forget everything every memo and memoized function remembers."""
    for memo in _MEMOS:
        memo.clear()
    for clear in _FUNCTIONS:
        clear()
