"""The in-memory cache of ranking tables: reused within a generation, bounded in size."""

from __future__ import annotations

from service.http.ranking_cache import RankingCache


def test_a_table_is_computed_once_per_generation():
    cache, calls = RankingCache(), []

    def compute():
        calls.append(1)
        return [{"n": len(calls)}]

    first = cache.table("mase", 1, compute)
    again = cache.table("mase", 1, compute)
    newer = cache.table("mase", 2, compute)

    assert first == again == [{"n": 1}]
    assert newer == [{"n": 2}]
    assert len(calls) == 2


def test_the_least_recently_used_table_is_dropped_beyond_capacity():
    cache, calls = RankingCache(capacity=2), []

    def compute(name):
        return lambda: calls.append(name) or [{"key": name}]

    cache.table("a", 1, compute("a"))
    cache.table("b", 1, compute("b"))
    cache.table("a", 1, compute("a"))  # a is now the most recent
    cache.table("c", 1, compute("c"))  # evicts b
    cache.table("a", 1, compute("a"))
    cache.table("b", 1, compute("b"))

    assert calls == ["a", "b", "c", "b"]
