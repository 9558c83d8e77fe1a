"""The ranking table for BI tools: every series' candidates on its latest successful run.

One row per series x candidate, ranked by one stored score (a metric at one horizon, or
pooled, and an interval level for interval scores); lower values rank first for every
rankable metric. Ties share the best rank (1, 1, 3); candidates without a value come last,
unranked. This is the rule of :func:`storage.results.queries.ranked_candidates`, computed in one
SQL statement for all series at once.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import datetime
from typing import Any

from sqlalchemy import case, func, select
from sqlalchemy.orm import Session

from backtest.plan import RANK_SCORES
from storage.db import ResultCandidate, ScoreRecord, SeriesRecord
from storage.errors import translates_errors
from storage.results.queries import latest_runs_query

RANKABLE = (*RANK_SCORES, "winkler", "msis")
"""Metrics where lower is better: the plan's rankable scores, and the interval scores
``winkler`` and ``msis``, which need an interval level; ``pinball`` takes one (one level's
two quantiles) or none (every quantile of the plan)."""


@translates_errors
def ranking_table(session: Session, *, metric: str, horizon: int | None = None,
                  level: int | None = None, prefix: str | None = None,
                  tags: Mapping[str, str] | None = None, limit: int | None = None,
                  offset: int = 0, as_of: datetime | None = None) -> list[dict[str, Any]]:
    """Rows: series_key, series_version, run_id, run_finished_at, metric, horizon, level,
    rank, candidate_id, candidate, is_benchmark, value, count, note; by series key, rank,
    candidate id. With ``as_of``, each series' latest successful run finished by then."""
    latest = latest_runs_query(as_of=as_of).subquery()
    s = ScoreRecord
    # the chosen score's row keys come from the score index alone; SQLite would otherwise
    # walk every score row of a unit by primary key
    chosen = (select(s.run_id, s.series_version_id, s.position)
              .where(s.metric == metric, _equal(s.horizon, horizon), _equal(s.level, level))
              .subquery())
    unscored = s.value.is_(None)
    place = func.rank().over(partition_by=(s.run_id, s.series_version_id, unscored),
                             order_by=s.value)
    inner = (
        select(latest.c.series_key, latest.c.version_number.label("series_version"),
               latest.c.run_id, latest.c.finished_at.label("run_finished_at"), s.metric,
               s.horizon, s.level, place.label("place"), unscored.label("unscored"),
               s.candidate_id, ResultCandidate.label.label("candidate"),
               (s.candidate_id == latest.c.benchmark_id).label("is_benchmark"), s.value,
               s.count, s.note)
        .select_from(latest)
        .join(chosen, (chosen.c.run_id == latest.c.run_id)
              & (chosen.c.series_version_id == latest.c.series_version_id))
        .join(s, (s.run_id == chosen.c.run_id)
              & (s.series_version_id == chosen.c.series_version_id)
              & (s.position == chosen.c.position))
        .join(ResultCandidate, (ResultCandidate.run_id == s.run_id)
              & (ResultCandidate.series_version_id == s.series_version_id)
              & (ResultCandidate.candidate_id == s.candidate_id))
        .join(SeriesRecord, SeriesRecord.key == latest.c.series_key))
    if prefix:
        inner = inner.where(func.substr(latest.c.series_key, 1, len(prefix)) == prefix)
    for name, value in (tags or {}).items():
        inner = inner.where(SeriesRecord.tags[name].as_string() == value)
    ranked = inner.subquery()
    c = ranked.c
    query = (select(c.series_key, c.series_version, c.run_id, c.run_finished_at, c.metric,
                    c.horizon, c.level, case((c.unscored, None), else_=c.place).label("rank"),
                    c.candidate_id, c.candidate, c.is_benchmark, c.value, c.count, c.note)
             .order_by(c.series_key, c.unscored, c.place, c.candidate_id)
             .limit(limit).offset(offset))
    return [dict(row) for row in session.execute(query).mappings()]


def _equal(column: Any, value: int | None) -> Any:
    """``column = value``, or ``IS NULL``: a literal NULL test lets the score index serve it."""
    return column.is_(None) if value is None else column == value
