"""Questions asked of the stored results, answered with SQL on either backend.

"Latest successful run" of a series is the succeeded run with results for any version of
that series that finished last (ties broken by the higher run id). Rankings are queries
over stored scores, not stored state.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

from sqlalchemy import ColumnElement, Select, case, func, select
from sqlalchemy.orm import Session

from storage.db import (
    Run,
    ScoreRecord,
    SeriesRecord,
    SeriesResultRecord,
    SeriesVersion,
)
from storage.errors import translates_errors


@dataclass(frozen=True)
class LatestRun:
    """The latest successful run of a series, and the version it used."""

    series_key: str
    series_version_id: int
    version_number: int
    run_id: int
    finished_at: datetime
    benchmark_id: str


@dataclass(frozen=True)
class ScorePoint:
    """One run's value of a candidate's score on a series."""

    run_id: int
    finished_at: datetime
    series_version_id: int
    version_number: int
    value: float | None
    count: int


@translates_errors
def latest_successful_runs(session: Session) -> list[LatestRun]:
    """The latest successful run of every series that has one, by series key."""
    return [LatestRun(*row) for row in session.execute(latest_runs_query().order_by("series_key"))]


@translates_errors
def succeeded_run_count(session: Session) -> int:
    """How many runs have succeeded: it grows exactly when a ranking can change."""
    return session.scalar(select(func.count()).select_from(Run)
                          .where(Run.status == "succeeded")) or 0


@translates_errors
def latest_successful_run(session: Session, series_key: str) -> LatestRun | None:
    """The latest successful run of one series, if any."""
    row = session.execute(latest_runs_query(series_key)).first()
    return None if row is None else LatestRun(*row)


@translates_errors
def score_history(session: Session, series_key: str, candidate_id: str, *, metric: str,
                  horizon: int | None = None, level: int | None = None) -> list[ScorePoint]:
    """A candidate's score on a series in every successful run, oldest first."""
    rows = session.execute(
        select(Run.id, Run.finished_at, SeriesVersion.id, SeriesVersion.number,
               ScoreRecord.value, ScoreRecord.count)
        .select_from(ScoreRecord)
        .join(Run, Run.id == ScoreRecord.run_id)
        .join(SeriesVersion, SeriesVersion.id == ScoreRecord.series_version_id)
        .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
        .where(SeriesRecord.key == series_key, Run.status == "succeeded",
               ScoreRecord.candidate_id == candidate_id,
               *_score_filter(metric, horizon, level))
        .order_by(Run.finished_at, Run.id))
    return [ScorePoint(*row) for row in rows]


def latest_runs_query(series_key: str | None = None,
                      as_of: datetime | None = None) -> Select[tuple[Any, ...]]:
    """Columns series_key, series_version_id, version_number, run_id, finished_at,
    benchmark_id: the latest successful run of every series (or of one), among the runs
    finished by ``as_of`` if given.

    It reads only key columns of ``series_result`` (a covering index), never its wide
    evidence rows."""
    order = func.row_number().over(partition_by=SeriesRecord.id,
                                   order_by=(Run.finished_at.desc(), Run.id.desc()))
    ranked = (
        select(SeriesRecord.key.label("series_key"),
               SeriesVersion.id.label("series_version_id"),
               SeriesVersion.number.label("version_number"), Run.id.label("run_id"),
               Run.finished_at.label("finished_at"),
               SeriesResultRecord.benchmark_id.label("benchmark_id"), order.label("recency"))
        .select_from(SeriesResultRecord)
        .join(Run, Run.id == SeriesResultRecord.run_id)
        .join(SeriesVersion, SeriesVersion.id == SeriesResultRecord.series_version_id)
        .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
        .where(Run.status == "succeeded")
    )
    if series_key is not None:
        ranked = ranked.where(SeriesRecord.key == series_key)
    if as_of is not None:
        ranked = ranked.where(Run.finished_at <= as_of)
    latest = ranked.subquery()
    return select(latest.c.series_key, latest.c.series_version_id, latest.c.version_number,
                  latest.c.run_id, latest.c.finished_at, latest.c.benchmark_id
                  ).where(latest.c.recency == 1)


def _score_filter(metric: str, horizon: int | None,
                  level: int | None) -> list[ColumnElement[bool]]:
    return [ScoreRecord.metric == metric, ScoreRecord.horizon.is_not_distinct_from(horizon),
            ScoreRecord.level.is_not_distinct_from(level)]


def common_ground(score: type[ScoreRecord]) -> tuple[Any, Any, Any]:
    """The value, count and note a ranking reads from score rows: the common-ground
    figures, or the own-folds ones on rows stored before those existed."""
    stored = score.common_count.is_not(None)
    return (case((stored, score.common_value), else_=score.value),
            case((stored, score.common_count), else_=score.count),
            case((stored, score.common_note), else_=score.note))
