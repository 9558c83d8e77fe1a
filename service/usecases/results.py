"""Reading a run's stored results as flat tables, and the BI ranking across series.

Every read checks that the run exists (404 otherwise) in the same transaction as the table
it reads.
"""

from __future__ import annotations

from collections.abc import Callable, Hashable
from datetime import datetime
from typing import Any, Protocol

from sqlalchemy.orm import Session, sessionmaker

from storage.results import (
    evidence_table,
    fold_table,
    plan_levels,
    rank_table,
    ranking_table,
    score_table,
    succeeded_run_count,
)
from storage.runs import get_run

Rows = list[dict[str, Any]]
__all__ = ["evidence_rows", "fold_rows", "latest_ranking", "rank_rows", "score_rows"]


class RankingTables(Protocol):
    """A cache of whole ranking tables, valid while the count of succeeded runs stands."""

    def table(self, key: Hashable, generation: int, compute: Callable[[], Rows]) -> Rows: ...


def score_rows(sessions: sessionmaker[Session], run_id: int, **filters: Any) -> Rows:
    """The run's score table (filters and paging as :func:`storage.results.score_table`)."""
    with sessions.begin() as session:
        get_run(session, run_id)
        return score_table(session, run_id, **filters)


def fold_rows(sessions: sessionmaker[Session], run_id: int,
              **filters: Any) -> tuple[list[int], Rows]:
    """The plan's interval levels and the run's fold table."""
    with sessions.begin() as session:
        get_run(session, run_id)
        levels = plan_levels(session, run_id)
        return levels, fold_table(session, run_id, levels, **filters)


def rank_rows(sessions: sessionmaker[Session], run_id: int, **filters: Any) -> Rows:
    """Each series' candidates as the run ranked them."""
    with sessions.begin() as session:
        get_run(session, run_id)
        return rank_table(session, run_id, **filters)


def evidence_rows(sessions: sessionmaker[Session], run_id: int, **filters: Any) -> Rows:
    """Per series, the run's evidence documents."""
    with sessions.begin() as session:
        get_run(session, run_id)
        return evidence_table(session, run_id, **filters)


def latest_ranking(sessions: sessionmaker[Session], cache: RankingTables, *, metric: str,
                   horizon: int | None, level: int | None, prefix: str | None,
                   tags: dict[str, str] | None, as_of: datetime | None) -> Rows:
    """Every series' candidates ranked on its latest successful run, from the cache while no
    run has finished since it was built."""
    key = (metric, horizon, level, prefix, tuple(sorted(tags.items())) if tags else (), as_of)
    with sessions.begin() as session:
        return cache.table(key, succeeded_run_count(session), lambda: ranking_table(
            session, metric=metric, horizon=horizon, level=level, prefix=prefix, tags=tags,
            as_of=as_of))
