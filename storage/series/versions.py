"""Series and their immutable versions.

A version is identified by the series' fingerprint, the SHA-256 of
:func:`backtest.series.canonical_json` (key, frequency, season length, ``[label, value]``
observations and filled periods; see :meth:`backtest.series.Series.fingerprint`). Saving
data whose fingerprint is stored returns that version; otherwise a new version is numbered
after the latest and marked ``append`` (the previous observations are an unchanged prefix)
or ``revision`` (history was corrected). A series' key, frequency, season length, unit and
tags are fixed by its first upload.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from sqlalchemy import func, insert, select
from sqlalchemy.orm import Session

from backtest.frequency import parse_frequency
from backtest.series import Series
from storage.audit import (
    as_row,
    record_event,
    series_digest,
    series_subject,
    version_digest,
    version_subject,
)
from storage.db import Observation, SeriesRecord, SeriesSkeleton, SeriesVersion, utc_now
from storage.errors import ConflictError, NotFoundError, translates_errors
from storage.series.skeleton import skeleton


@dataclass(frozen=True)
class VersionInfo:
    """A stored series version, without its observations."""

    id: int
    series_key: str
    number: int
    fingerprint: str
    change: str
    n_obs: int
    first_period: str
    last_period: str
    created_at: datetime
    created_by: str


@dataclass(frozen=True)
class SaveOutcome:
    """The version data was saved as, and whether saving created it."""

    version: VersionInfo
    created: bool


@translates_errors
def save_series_version(session: Session, series: Series, *, actor: str,
                        unit: str | None = None,
                        tags: Mapping[str, str] | None = None) -> SaveOutcome:
    """Store ``series`` as a new version of its key, unless the same data is stored."""
    fingerprint = series.fingerprint()
    existing = find_version(session, fingerprint)
    if existing is not None:
        return SaveOutcome(existing, created=False)
    record = _series_record(session, series, actor, unit, tags)
    observations = _observation_rows(series)
    previous = _latest(session, record.id)
    version = SeriesVersion(
        series_id=record.id, number=previous.number + 1 if previous else 1,
        fingerprint=fingerprint, change=_change(session, previous, observations),
        n_obs=len(series), first_period=series.label(0), last_period=series.label(len(series) - 1),
        fill_policy=series.fill_policy, created_at=utc_now(), created_by=actor)
    session.add(version)
    session.flush()
    for row in observations:
        row["series_version_id"] = version.id
    session.execute(insert(Observation), observations)
    record_event(session, actor=actor, action="series_version.created",
                 subject=version_subject(version.id),
                 digest=version_digest([as_row(version)], observations))
    return SaveOutcome(_info(version, record.key), created=True)


@translates_errors
def load_series(session: Session, version_id: int) -> Series:
    """The :class:`Series` of a stored version (its fingerprint equals the stored one)."""
    version = _version(session, version_id)
    record = session.get_one(SeriesRecord, version.series_id)
    rows = session.execute(
        select(Observation.period, Observation.value, Observation.filled)
        .where(Observation.series_version_id == version_id).order_by(Observation.position)
    ).all()
    # labels are stored as written; the first one gives the notation of all the others
    frequency = parse_frequency(record.frequency).written_as(rows[0].period)
    values = np.array([row.value for row in rows], dtype=float)
    values.setflags(write=False)
    filled = tuple(row.period for row in rows if row.filled)
    return Series(record.key, frequency, record.season_length,
                  frequency.position(rows[0].period), values, filled,
                  version.fill_policy)  # type: ignore[arg-type]  # stored from a FillPolicy


@translates_errors
def filled_periods(session: Session, version_id: int) -> tuple[str, ...]:
    """The periods of a stored version that its fill policy made (never observed)."""
    return tuple(session.scalars(
        select(Observation.period).where(Observation.series_version_id == version_id,
                                         Observation.filled.is_(True))
        .order_by(Observation.position)))


@translates_errors
def get_version(session: Session, version_id: int) -> VersionInfo:
    """A stored version by id; raise :class:`NotFoundError` if there is none."""
    version = _version(session, version_id)
    return _info(version, session.get_one(SeriesRecord, version.series_id).key)


@translates_errors
def find_version(session: Session, fingerprint: str) -> VersionInfo | None:
    """The version with this fingerprint, if stored."""
    row = session.execute(
        select(SeriesVersion, SeriesRecord.key).join(SeriesRecord)
        .where(SeriesVersion.fingerprint == fingerprint)
    ).first()
    return None if row is None else _info(*row)


@translates_errors
def list_versions(session: Session, series_key: str) -> list[VersionInfo]:
    """Every version of a series, oldest first (empty if the key is unknown)."""
    rows = session.execute(
        select(SeriesVersion, SeriesRecord.key).join(SeriesRecord)
        .where(SeriesRecord.key == series_key).order_by(SeriesVersion.number)
    ).all()
    return [_info(*row) for row in rows]


def _version(session: Session, version_id: int) -> SeriesVersion:
    version = session.get(SeriesVersion, version_id)
    if version is None:
        raise NotFoundError(f"series version {version_id} does not exist")
    return version


def _series_record(session: Session, series: Series, actor: str, unit: str | None,
                   tags: Mapping[str, str] | None) -> SeriesRecord:
    record = session.execute(
        select(SeriesRecord).where(SeriesRecord.key == series.key)).scalar_one_or_none()
    if record is None:
        look_alike = _stored_look_alike(session, series.key)
        if look_alike is not None:
            raise ConflictError(f"series key {series.key!r} looks like the stored key "
                                f"{look_alike!r} (letters of another script that read alike); "
                                "use the stored key or a distinct one")
        record = SeriesRecord(key=series.key, frequency=series.frequency.duration,
                              season_length=series.season_length, unit=unit,
                              tags=dict(tags or {}), created_at=utc_now(), created_by=actor)
        session.add(record)
        session.flush()
        session.add(SeriesSkeleton(series_id=record.id, skeleton=skeleton(series.key)))
        record_event(session, actor=actor, action="series.created",
                     subject=series_subject(record.id), digest=series_digest([as_row(record)]))
        return record
    _check_same_series(record, series, unit, tags)
    return record


def _stored_look_alike(session: Session, key: str) -> str | None:
    return session.scalar(select(SeriesRecord.key).join(
        SeriesSkeleton, SeriesSkeleton.series_id == SeriesRecord.id).where(
        SeriesSkeleton.skeleton == skeleton(key)).limit(1))


def _check_same_series(record: SeriesRecord, series: Series, unit: str | None,
                       tags: Mapping[str, str] | None) -> None:
    stored = {"frequency": record.frequency, "season length": record.season_length,
              "unit": record.unit, "tags": record.tags}
    given = {"frequency": series.frequency.duration, "season length": series.season_length,
             "unit": unit if unit is not None else record.unit,
             "tags": dict(tags) if tags is not None else record.tags}
    for name, value in given.items():
        if value != stored[name]:
            raise ConflictError(f"series {record.key!r} is stored with {name} "
                                f"{stored[name]!r}, not {value!r}; it cannot change")


def _latest(session: Session, series_id: int) -> SeriesVersion | None:
    latest = (select(func.max(SeriesVersion.number))
              .where(SeriesVersion.series_id == series_id).scalar_subquery())
    return session.execute(
        select(SeriesVersion).where(SeriesVersion.series_id == series_id,
                                    SeriesVersion.number == latest)
    ).scalar_one_or_none()


def _change(session: Session, previous: SeriesVersion | None, rows: list[dict[str, Any]]) -> str:
    if previous is None:
        return "initial"
    before = session.execute(
        select(Observation.period, Observation.value, Observation.filled)
        .where(Observation.series_version_id == previous.id).order_by(Observation.position)
    ).all()
    now = [(r["period"], r["value"], r["filled"]) for r in rows[:len(before)]]
    unchanged = len(rows) > len(before) and now == [tuple(r) for r in before]
    return "append" if unchanged else "revision"


def _observation_rows(series: Series) -> list[dict[str, Any]]:
    filled = set(series.filled)
    return [{"series_version_id": None, "position": i, "period": label, "value": float(value),
             "filled": label in filled}
            for i, (label, value) in enumerate(zip(series.labels(), series.values))]


def _info(version: SeriesVersion, key: str) -> VersionInfo:
    return VersionInfo(version.id, key, version.number, version.fingerprint, version.change,
                       version.n_obs, version.first_period, version.last_period,
                       version.created_at, version.created_by)
