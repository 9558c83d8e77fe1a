"""A run's stored results as flat, paged tables: scores, folds, ranking, evidence.

Rows are dicts keyed by column name, ordered by the run's series order and then as the
engine produced them. Series are named by key and version number. Results appear unit by
unit while a run is running; they are complete when it has succeeded.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, Literal

from sqlalchemy import Select, and_, select
from sqlalchemy.orm import Session, aliased

from storage.db import (
    FoldRecord,
    ForecastBound,
    ForecastRecord,
    PlanRecord,
    RankRecord,
    ResultCandidate,
    Run,
    RunSeries,
    ScoreRecord,
    SeriesRecord,
    SeriesResultRecord,
    SeriesVersion,
)
from storage.errors import translates_errors

Horizons = Literal["all"] | int | None
"""Which scores: ``"all"``, one horizon (1..H), or ``None`` for the pooled ones."""


@translates_errors
def score_table(session: Session, run_id: int, *, series_key: str | None = None,
                candidate_id: str | None = None, metric: str | None = None,
                horizon: Horizons = "all", limit: int | None = None,
                offset: int = 0) -> list[dict[str, Any]]:
    """Scores: series_key, series_version, candidate_id, candidate, horizon, metric, level,
    value, count, note."""
    query = _per_candidate(
        select(ScoreRecord.candidate_id, ResultCandidate.label.label("candidate"),
               ScoreRecord.horizon, ScoreRecord.metric, ScoreRecord.level, ScoreRecord.value,
               ScoreRecord.count, ScoreRecord.note), ScoreRecord, run_id, series_key,
        candidate_id)
    if metric is not None:
        query = query.where(ScoreRecord.metric == metric)
    if horizon != "all":
        query = query.where(ScoreRecord.horizon.is_not_distinct_from(horizon))
    query = query.order_by(RunSeries.position, ScoreRecord.position)
    return _rows(session, query, limit, offset)


@translates_errors
def rank_table(session: Session, run_id: int, *, series_key: str | None = None,
               limit: int | None = None, offset: int = 0) -> list[dict[str, Any]]:
    """The engine's ranking of each series: series_key, series_version, rank, candidate_id,
    candidate, score, ratio_to_benchmark, is_benchmark, folds_ok, folds_failed, folds_not_converged,
    in_confidence_set, beats_benchmark, calibration_zone, score_own_folds, common_folds,
    score_count, score_possible."""
    r = RankRecord
    query = _per_candidate(
        select(r.rank, r.candidate_id, r.label.label("candidate"), r.score, r.ratio_to_benchmark,
               r.is_benchmark, r.folds_ok, r.folds_failed, r.folds_not_converged,
               r.in_confidence_set, r.beats_benchmark, r.calibration_zone, r.score_own_folds,
               r.common_folds, r.score_count, r.score_possible), r, run_id, series_key, None)
    return _rows(session, query.order_by(RunSeries.position, r.position), limit, offset)


@translates_errors
def plan_levels(session: Session, run_id: int) -> list[int]:
    """The interval levels of a run's plan."""
    body = session.scalar(select(PlanRecord.body).join(Run).where(Run.id == run_id))
    return [int(level) for level in (body or {}).get("levels", [])]


@translates_errors
def fold_table(session: Session, run_id: int, levels: Sequence[int], *,
               series_key: str | None = None, candidate_id: str | None = None,
               limit: int | None = None, offset: int = 0) -> list[dict[str, Any]]:
    """One row per fold and horizon: series_key, series_version, candidate_id, candidate,
    fold, origin, train_start, train_size, reestimated, status, reason, horizon, period,
    actual, point, then ``lower_<level>``, ``upper_<level>`` for each level."""
    f, p = FoldRecord, ForecastRecord
    bounds = []
    for level in levels:
        b = aliased(ForecastBound)
        bounds.append((b, and_(b.run_id == p.run_id, b.series_version_id == p.series_version_id,
                               b.candidate_id == p.candidate_id, b.fold == p.fold,
                               b.horizon == p.horizon, b.level == level), level))
    columns = [f.candidate_id, ResultCandidate.label.label("candidate"), f.fold, f.origin,
               f.train_start, f.train_size, f.reestimated, f.status, f.reason, p.horizon,
               p.period, p.actual, p.point]
    for b, _, level in bounds:
        columns += [b.lower.label(f"lower_{level}"), b.upper.label(f"upper_{level}")]
    query = _per_candidate(select(*columns), f, run_id, series_key, candidate_id).join(
        p, (p.run_id == f.run_id) & (p.series_version_id == f.series_version_id)
        & (p.candidate_id == f.candidate_id) & (p.fold == f.fold))
    for b, condition, _ in bounds:
        query = query.outerjoin(b, condition)
    query = query.order_by(RunSeries.position, f.position, p.horizon)
    return _rows(session, query, limit, offset)


@translates_errors
def evidence_table(session: Session, run_id: int, *, series_key: str | None = None,
                   limit: int | None = None, offset: int = 0) -> list[dict[str, Any]]:
    """Each series' evidence document: series_key, series_version, evidence."""
    u = SeriesResultRecord
    query = (select(SeriesRecord.key.label("series_key"),
                    SeriesVersion.number.label("series_version"), u.evidence)
             .join(RunSeries, (RunSeries.run_id == u.run_id)
                   & (RunSeries.series_version_id == u.series_version_id))
             .join(SeriesVersion, SeriesVersion.id == u.series_version_id)
             .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
             .where(u.run_id == run_id))
    if series_key is not None:
        query = query.where(SeriesRecord.key == series_key)
    return _rows(session, query.order_by(RunSeries.position), limit, offset)


def _per_candidate(query: Select[Any], table: Any, run_id: int, series_key: str | None,
                   candidate_id: str | None) -> Select[Any]:
    """Add the series key and version, the candidate's label, and the filters."""
    query = (query.add_columns(SeriesRecord.key.label("series_key"),
                               SeriesVersion.number.label("series_version"))
             .select_from(table)
             .join(ResultCandidate, (ResultCandidate.run_id == table.run_id)
                   & (ResultCandidate.series_version_id == table.series_version_id)
                   & (ResultCandidate.candidate_id == table.candidate_id))
             .join(RunSeries, (RunSeries.run_id == table.run_id)
                   & (RunSeries.series_version_id == table.series_version_id))
             .join(SeriesVersion, SeriesVersion.id == table.series_version_id)
             .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
             .where(table.run_id == run_id))
    if series_key is not None:
        query = query.where(SeriesRecord.key == series_key)
    if candidate_id is not None:
        query = query.where(table.candidate_id == candidate_id)
    return query


def _rows(session: Session, query: Select[Any], limit: int | None,
          offset: int) -> list[dict[str, Any]]:
    return [dict(row) for row in session.execute(query.limit(limit).offset(offset)).mappings()]
