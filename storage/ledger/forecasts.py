"""The ledger of issued forecasts: each stored once, immutably, with what produced it.

An issued forecast is stored as a header (series version, candidate, horizon, levels, seed,
origin, parameters, scales, software versions, warnings, issuer and time) and tidy rows
of points and bounds, and is read back as the :class:`IssuedForecast` that was issued.
Issuing again with the same inputs (series version, candidate, horizon, levels, seed)
returns the stored record instead of a second one.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import ColumnElement, Select, Table, select
from sqlalchemy.orm import Session

from backtest.ledger import IssuedForecast
from storage.audit import (
    ISSUED_TABLES,
    Row,
    as_row,
    issued_digest,
    issued_subject,
    lock_audit_log,
    record_event,
)
from storage.db import (
    CandidateRecord,
    IssuedForecastRecord,
    SeriesRecord,
    SeriesVersion,
    insert_rows,
    utc_now,
)
from storage.errors import ConflictError, NotFoundError, translates_errors
from storage.ledger.rows import (
    bound_rows,
    forecast_of,
    header_row,
    levels_text,
    point_rows,
)
from storage.specs import register_candidate

HEADER, POINTS, BOUNDS = ISSUED_TABLES


@dataclass(frozen=True)
class IssuedRecord:
    """An issued forecast as stored in the ledger."""

    forecast_id: int
    series_key: str
    series_version_id: int
    issued_by: str
    issued_at: datetime
    forecast: IssuedForecast


@translates_errors
def record_issued_forecast(session: Session, *, series_version_id: int,
                           forecast: IssuedForecast, actor: str) -> tuple[IssuedRecord, bool]:
    """Store a forecast issued from a series version; return the record and whether it is new.

    With the same inputs already issued, the stored record is returned and nothing is
    written. The candidate is registered in the catalog if new. Raises
    :class:`NotFoundError` for an unknown version and :class:`ConflictError` if the
    forecast was computed on other data than that version or its parts disagree.
    """
    lock_audit_log(session)
    version = session.get(SeriesVersion, series_version_id)
    if version is None:
        raise NotFoundError(f"series version {series_version_id} does not exist")
    if forecast.fingerprint != version.fingerprint:
        raise ConflictError(f"the forecast was computed on other data than series version "
                            f"{series_version_id} (fingerprints differ)")
    _check_consistent(forecast)
    existing = session.scalar(select(IssuedForecastRecord.id).where(
        IssuedForecastRecord.series_version_id == series_version_id,
        IssuedForecastRecord.candidate_id == forecast.candidate_id,
        IssuedForecastRecord.horizon == forecast.horizon,
        IssuedForecastRecord.levels == levels_text(forecast.levels),
        IssuedForecastRecord.seed == forecast.seed))
    if existing is not None:
        return get_issued(session, existing), False
    register_candidate(session, forecast.candidate_id, forecast.candidate_spec, actor=actor)
    header = IssuedForecastRecord(**header_row(
        forecast, series_id=version.series_id, series_version_id=series_version_id,
        issued_by=actor, issued_at=utc_now()))
    session.add(header)
    session.flush()
    rows = {HEADER: [as_row(header)], POINTS: point_rows(header.id, forecast),
            BOUNDS: bound_rows(header.id, forecast)}
    insert_rows(session, POINTS, rows[POINTS])
    insert_rows(session, BOUNDS, rows[BOUNDS])
    record_event(session, actor=actor, action="forecast.issued",
                 subject=issued_subject(header.id), digest=issued_digest(rows))
    return get_issued(session, header.id), True


@translates_errors
def get_issued(session: Session, forecast_id: int) -> IssuedRecord:
    """An issued forecast by id; raise :class:`NotFoundError` if there is none."""
    found = issued_records(session, [IssuedForecastRecord.id == forecast_id])
    if not found:
        raise NotFoundError(f"issued forecast {forecast_id} does not exist")
    return found[0]


@translates_errors
def list_issued(session: Session, *, series_key: str | None = None,
                candidate_id: str | None = None, issued_from: datetime | None = None,
                issued_to: datetime | None = None, as_of: datetime | None = None,
                after_id: int = 0, limit: int = 500) -> list[IssuedRecord]:
    """Issued forecasts by id, from the first after ``after_id``, at most ``limit``.

    Filters: the series key, the candidate, issue times in ``[issued_from, issued_to)``, and
    ``as_of`` (the ledger as it stood then: issued at or before it).
    """
    f = IssuedForecastRecord
    conditions: list[ColumnElement[bool]] = [f.id > after_id]
    if series_key is not None:
        conditions.append(f.series_id == select(SeriesRecord.id)
                          .where(SeriesRecord.key == series_key).scalar_subquery())
    if candidate_id is not None:
        conditions.append(f.candidate_id == candidate_id)
    if issued_from is not None:
        conditions.append(f.issued_at >= issued_from)
    if issued_to is not None:
        conditions.append(f.issued_at < issued_to)
    if as_of is not None:
        conditions.append(f.issued_at <= as_of)
    return issued_records(session, conditions, limit=limit)


def issued_records(session: Session, conditions: Sequence[ColumnElement[bool]], *,
                   by_issue_time: bool = False, limit: int | None = None) -> list[IssuedRecord]:
    """The issued forecasts meeting ``conditions``, by id or by issue time (then id)."""
    f = IssuedForecastRecord
    order = [f.issued_at, f.id] if by_issue_time else [f.id]
    chosen = select(f.id).where(*conditions).order_by(*order).limit(limit)
    headers = session.execute(
        select(f, SeriesRecord.key, SeriesRecord.season_length, SeriesVersion.fingerprint,
               CandidateRecord.spec)
        .join(SeriesRecord, SeriesRecord.id == f.series_id)
        .join(SeriesVersion, SeriesVersion.id == f.series_version_id)
        .join(CandidateRecord, CandidateRecord.id == f.candidate_id)
        .where(f.id.in_(chosen)).order_by(*order)).all()
    points, bounds = (_by_forecast(session, table, chosen) for table in (POINTS, BOUNDS))
    return [IssuedRecord(header.id, key, header.series_version_id, header.issued_by,
                         header.issued_at,
                         forecast_of(as_row(header), points.get(header.id, []),
                                     bounds.get(header.id, []), series_key=key,
                                     season_length=season_length, fingerprint=fingerprint,
                                     candidate_spec=spec))
            for header, key, season_length, fingerprint, spec in headers]


def _by_forecast(session: Session, table: Table,
                 chosen: Select[tuple[int]]) -> dict[int, list[Row]]:
    grouped: dict[int, list[Row]] = {}
    for row in session.execute(select(table).where(table.c.forecast_id.in_(chosen))).mappings():
        grouped.setdefault(row["forecast_id"], []).append(row)
    return grouped


def _check_consistent(forecast: IssuedForecast) -> None:
    horizon, levels = forecast.horizon, set(forecast.levels)
    if horizon < 1 or len(forecast.point) != horizon:
        raise ConflictError(f"the forecast has {len(forecast.point)} points for "
                            f"{horizon} target periods")
    if set(forecast.lower) != levels or set(forecast.upper) != levels:
        raise ConflictError(f"the forecast's bounds are not given at exactly its levels "
                            f"{list(forecast.levels)}")
    if any(len(bounds) != horizon for bounds in (*forecast.lower.values(),
                                                 *forecast.upper.values())):
        raise ConflictError(f"the forecast's bounds do not all cover its {horizon} horizons")
