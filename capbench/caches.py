"""Caches that two page sessions (two threads) may share safely.

Meshes and assemblies are reused across solves of the same geometry, and whole solutions
across solves of the same fixture at the same tolerance (an extraction repeated on the
page, a report after the page's result, a test repeating the demo); the page serves
several sessions from threads of one process, so every cache here holds a lock around
each lookup, insertion and eviction (an unlocked check-then-move could raise KeyError
when another session evicted the entry in between) and builds a missing entry at most
once. :func:`capbench.clear_caches` empties them all (benchmarks measure cold solves
with it).
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import Any

_ALL: list[Cache] = []


class Cache:
    """A least-recently-used cache of at most ``size`` entries, safe across threads.

    ``get_or(key, make)`` returns the entry for ``key``, building it with ``make()``
    when missing. The lock is re-entrant and held while ``make`` runs, so a build that
    asks the same cache for another entry (a refined mesh asking for the mesh it refines)
    works, and two threads never build the same entry twice.
    """

    def __init__(self, name: str, size: int):
        if size < 1:
            raise ValueError(f"cache size {size!r}; valid: a whole number >= 1")
        self.name = name
        self.size = size
        self._data: OrderedDict[Hashable, Any] = OrderedDict()
        self._lock = threading.RLock()
        self.hits = 0
        self.misses = 0
        _ALL.append(self)

    def get_or(self, key: Hashable, make: Callable[[], Any]) -> Any:
        with self._lock:
            if key in self._data:
                self._data.move_to_end(key)
                self.hits += 1
                return self._data[key]
            self.misses += 1
            value = make()
            self._data[key] = value
            self._data.move_to_end(key)
            while len(self._data) > self.size:
                self._data.popitem(last=False)
            return value

    def get(self, key: Hashable) -> Any | None:
        """The entry for ``key``, or None; for results too slow to build under the lock
        (a solve), which the caller builds unlocked and hands to :meth:`put`."""
        with self._lock:
            if key not in self._data:
                self.misses += 1
                return None
            self._data.move_to_end(key)
            self.hits += 1
            return self._data[key]

    def put(self, key: Hashable, value: Any) -> None:
        with self._lock:
            self._data[key] = value
            self._data.move_to_end(key)
            while len(self._data) > self.size:
                self._data.popitem(last=False)

    def clear(self) -> None:
        with self._lock:
            self._data.clear()
            self.hits = self.misses = 0

    def __len__(self) -> int:
        with self._lock:
            return len(self._data)

    def __contains__(self, key: Hashable) -> bool:
        with self._lock:
            return key in self._data


def clear_caches() -> None:
    """Empty every cache capbench keeps in this process (meshes, assemblies, solutions): the next
    solve starts cold. Safe to call while other threads solve."""
    for cache in _ALL:
        cache.clear()
