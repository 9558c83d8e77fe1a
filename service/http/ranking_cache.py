"""Whole ranking tables kept in memory between requests, valid while no run finishes.

A BI tool pages through the ranking 500 rows at a time, and every page needs the whole
table ranked first. The table changes only when a run succeeds (runs are frozen once
final, series tags are fixed at first upload), so each computed table is kept with the
number of succeeded runs it saw; a request that finds the same number is served from
memory. Each API process keeps its own cache; there is nothing to invalidate across
processes because the count is read from the store on every request.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import Any

Rows = list[dict[str, Any]]


class RankingCache:
    """The most recently used ``capacity`` ranking tables, each tagged with a generation."""

    def __init__(self, capacity: int = 32) -> None:
        self._capacity = capacity
        self._tables: OrderedDict[Hashable, tuple[int, Rows]] = OrderedDict()
        self._lock = threading.Lock()

    def table(self, key: Hashable, generation: int, compute: Callable[[], Rows]) -> Rows:
        """The table for ``key`` at ``generation``, computed by ``compute`` when missing."""
        with self._lock:
            kept = self._tables.get(key)
            if kept is not None and kept[0] == generation:
                self._tables.move_to_end(key)
                return kept[1]
        rows = compute()
        with self._lock:
            self._tables[key] = (generation, rows)
            self._tables.move_to_end(key)
            while len(self._tables) > self._capacity:
                self._tables.popitem(last=False)
        return rows
