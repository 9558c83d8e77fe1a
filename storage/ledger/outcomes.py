"""Outcomes: issued forecasts scored against the actuals that arrived later.

An outcome set is one issued forecast scored against one series version. A forecast is due
for scoring when the latest version of its series is not the one it was issued from, holds
an observed (not filled) value for at least one of its target periods, and has not scored
it yet. Corrected actuals arrive as a new version, so they make a new set; sets are never
overwritten, and the current outcomes of a forecast are those of its newest version.

Each set is recorded exactly once: its key (forecast, version) is unique and the insert
does nothing on a conflict, so concurrent workers scoring the same pair store it once and
all but one are told it was already scored.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from sqlalchemy import ColumnElement, Select, Subquery, Table, and_, exists, func, select
from sqlalchemy.dialects import postgresql, sqlite
from sqlalchemy.orm import Session, aliased

from backtest.ledger import IssuedOutcomes, Outcome
from storage.audit import (
    OUTCOME_TABLES,
    Row,
    lock_audit_log,
    outcomes_digest,
    outcomes_subject,
    record_event,
)
from storage.db import (
    IssuedForecastRecord,
    IssuedPoint,
    Observation,
    OutcomeSetRecord,
    SeriesRecord,
    SeriesVersion,
    insert_rows,
    utc_now,
)
from storage.errors import ConflictError, NotFoundError, translates_errors
from storage.ledger.forecasts import issued_records
from storage.ledger.rows import level_rows, outcome_of, outcome_rows

SETS, OUTCOMES, LEVELS = OUTCOME_TABLES


@dataclass(frozen=True)
class OutcomeSet:
    """An issued forecast's outcomes against one series version."""

    forecast_id: int
    series_version_id: int
    scored_at: datetime
    outcomes: tuple[Outcome, ...]


@translates_errors
def due_outcomes(session: Session) -> list[tuple[int, int]]:
    """The (forecast id, series version id) pairs waiting to be scored, by forecast id."""
    f, p, o = IssuedForecastRecord, IssuedPoint, Observation
    latest = aliased(SeriesVersion)
    newest_number = (select(func.max(SeriesVersion.number))
                     .where(SeriesVersion.series_id == f.series_id).scalar_subquery())
    observed = exists().where(p.forecast_id == f.id, o.series_version_id == latest.id,
                              o.period == p.period, o.filled.is_(False))
    scored = exists().where(OutcomeSetRecord.forecast_id == f.id,
                            OutcomeSetRecord.series_version_id == latest.id)
    query = (select(f.id, latest.id)
             .join(latest, and_(latest.series_id == f.series_id,
                                latest.number == newest_number))
             .where(latest.id != f.series_version_id, observed, ~scored)
             .order_by(f.id))
    return [(forecast_id, version_id) for forecast_id, version_id in session.execute(query)]


@translates_errors
def record_outcomes(session: Session, *, forecast_id: int, series_version_id: int,
                    outcomes: Sequence[Outcome], actor: str) -> bool:
    """Store a forecast's outcomes against a version; ``False`` if that pair is scored already.

    Raises :class:`NotFoundError` for an unknown forecast or version, and
    :class:`ConflictError` if the version is not a later version of the forecast's series
    or an outcome does not match a target period of the forecast.
    """
    lock_audit_log(session)
    _check_scorable(session, forecast_id, series_version_id, outcomes)
    key = {"forecast_id": forecast_id, "series_version_id": series_version_id}
    header = {**key, "scored_at": utc_now(), "scored_by": actor}
    if not _insert_once(session, header):
        return False
    rows = {SETS: [header], OUTCOMES: outcome_rows(key, outcomes),
            LEVELS: level_rows(key, outcomes)}
    insert_rows(session, OUTCOMES, rows[OUTCOMES])
    insert_rows(session, LEVELS, rows[LEVELS])
    record_event(session, actor=actor, action="outcomes.recorded",
                 subject=outcomes_subject(forecast_id, series_version_id),
                 digest=outcomes_digest(rows))
    return True


@translates_errors
def current_outcomes(session: Session, forecast_id: int) -> OutcomeSet | None:
    """The forecast's outcomes against the newest version it was scored on, if any.

    Raises :class:`NotFoundError` if the forecast does not exist.
    """
    _check_issued(session, forecast_id)
    found = _outcome_sets(session, _newest_sets([SETS.c.forecast_id == forecast_id]))
    return found[0] if found else None


@translates_errors
def outcome_sets(session: Session, forecast_id: int) -> list[OutcomeSet]:
    """Every outcome set of a forecast, oldest version first.

    Raises :class:`NotFoundError` if the forecast does not exist.
    """
    _check_issued(session, forecast_id)
    return _outcome_sets(session, _sets([SETS.c.forecast_id == forecast_id]).subquery())


@translates_errors
def issued_with_outcomes(session: Session, series_key: str, candidate_id: str,
                         as_of: datetime | None = None) -> list[IssuedOutcomes]:
    """Every forecast issued for a series by a candidate, by issue time, each with its
    current outcomes (none yet: an empty tuple); with ``as_of``, the forecasts issued by
    then with the newest outcomes scored by then."""
    f = IssuedForecastRecord
    conditions = [f.candidate_id == candidate_id,
                  f.series_id == select(SeriesRecord.id)
                  .where(SeriesRecord.key == series_key).scalar_subquery()]
    scored: list[ColumnElement[bool]] = [SETS.c.forecast_id.in_(select(f.id).where(*conditions))]
    if as_of is not None:
        conditions.append(f.issued_at <= as_of)
        scored.append(SETS.c.scored_at <= as_of)
    records = issued_records(session, conditions, by_issue_time=True)
    current = {s.forecast_id: s.outcomes
               for s in _outcome_sets(session, _newest_sets(scored))}
    return [IssuedOutcomes(r.forecast_id, r.issued_at, r.forecast,
                           current.get(r.forecast_id, ()))
            for r in records]


def _check_issued(session: Session, forecast_id: int) -> IssuedForecastRecord:
    record = session.get(IssuedForecastRecord, forecast_id)
    if record is None:
        raise NotFoundError(f"issued forecast {forecast_id} does not exist")
    return record


def _check_scorable(session: Session, forecast_id: int, series_version_id: int,
                    outcomes: Sequence[Outcome]) -> None:
    forecast = _check_issued(session, forecast_id)
    version = session.get(SeriesVersion, series_version_id)
    if version is None:
        raise NotFoundError(f"series version {series_version_id} does not exist")
    if version.series_id != forecast.series_id or version.id == forecast.series_version_id:
        raise ConflictError(f"series version {series_version_id} is not a later version of "
                            f"the series forecast {forecast_id} was issued for")
    periods = dict(session.execute(select(IssuedPoint.horizon, IssuedPoint.period)
                                   .where(IssuedPoint.forecast_id == forecast_id)).tuples().all())
    levels = {int(level) for level in forecast.levels.split(",")}
    horizons = [o.horizon for o in outcomes]
    if len(set(horizons)) != len(horizons):
        raise ConflictError(f"the outcomes of forecast {forecast_id} repeat a horizon")
    for o in outcomes:
        if periods.get(o.horizon) != o.period:
            raise ConflictError(f"forecast {forecast_id} has no target period {o.period!r} "
                                f"at horizon {o.horizon}")
        if set(o.hits) != levels or set(o.interval_scores) != levels:
            raise ConflictError(f"the outcome at horizon {o.horizon} is not given at exactly "
                                f"the forecast's levels {sorted(levels)}")


def _insert_once(session: Session, header: dict[str, Any]) -> bool:
    """Insert the set's header unless its key is stored; whether it was inserted."""
    dialect = postgresql if session.get_bind().dialect.name == "postgresql" else sqlite
    statement = (dialect.insert(SETS).values(**header)
                 .on_conflict_do_nothing(index_elements=["forecast_id", "series_version_id"])
                 .returning(SETS.c.forecast_id))
    return session.execute(statement).first() is not None


def _sets(conditions: Sequence[ColumnElement[bool]]) -> Select[tuple[Any, ...]]:
    return (select(SETS, SeriesVersion.number)
            .join(SeriesVersion, SeriesVersion.id == SETS.c.series_version_id)
            .where(*conditions))


def _newest_sets(conditions: Sequence[ColumnElement[bool]]) -> Subquery:
    newest = func.row_number().over(partition_by=SETS.c.forecast_id,
                                    order_by=SeriesVersion.number.desc())
    ranked = _sets(conditions).add_columns(newest.label("newest")).subquery()
    return select(ranked).where(ranked.c.newest == 1).subquery()


def _outcome_sets(session: Session, chosen: Subquery) -> list[OutcomeSet]:
    """The sets in ``chosen`` (forecast_id, series_version_id, scored_at, number) with their
    outcomes, by forecast and version number."""
    headers = session.execute(select(chosen).order_by(chosen.c.forecast_id,
                                                      chosen.c.number)).mappings().all()
    outcomes = _grouped(session, OUTCOMES, chosen, "forecast_id", "series_version_id")
    levels = _grouped(session, LEVELS, chosen, "forecast_id", "series_version_id", "horizon")
    return [OutcomeSet(h["forecast_id"], h["series_version_id"], h["scored_at"],
                       tuple(outcome_of(row, levels.get((*_key(row), row["horizon"]), []))
                             for row in outcomes.get(_key(h), [])))
            for h in headers]


def _grouped(session: Session, table: Table, chosen: Subquery,
             *by: str) -> dict[tuple[int, ...], list[Row]]:
    """The rows of ``table`` belonging to the chosen sets, in key order, grouped by ``by``."""
    query = (select(table)
             .join(chosen, and_(table.c.forecast_id == chosen.c.forecast_id,
                                table.c.series_version_id == chosen.c.series_version_id))
             .order_by(*table.primary_key.columns))
    grouped: dict[tuple[int, ...], list[Row]] = {}
    for row in session.execute(query).mappings():
        grouped.setdefault(tuple(row[column] for column in by), []).append(row)
    return grouped


def _key(row: Row) -> tuple[int, int]:
    return row["forecast_id"], row["series_version_id"]
