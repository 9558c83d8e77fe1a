"""Finding series: by key, by key prefix and tags, with their latest version.

Tags are the ``name: value`` pairs a series was first stored with; a filter on several tags
matches series carrying all of them. The key prefix is compared exactly (case-sensitively)
on both backends.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import Select, func, select
from sqlalchemy.orm import Session

from storage.db import SeriesRecord, SeriesVersion
from storage.errors import NotFoundError, translates_errors
from storage.series.versions import VersionInfo


@dataclass(frozen=True)
class SeriesInfo:
    """A stored series and its latest version."""

    key: str
    frequency: str
    season_length: int
    unit: str | None
    tags: dict[str, str]
    created_at: datetime
    created_by: str
    latest: VersionInfo


@translates_errors
def find_series(session: Session, *, prefix: str | None = None,
                tags: Mapping[str, str] | None = None, limit: int | None = None,
                offset: int = 0) -> list[SeriesInfo]:
    """Series whose key starts with ``prefix`` and that carry every tag, ordered by key."""
    query = _with_latest()
    if prefix:
        query = query.where(func.substr(SeriesRecord.key, 1, len(prefix)) == prefix)
    for name, value in (tags or {}).items():
        query = query.where(SeriesRecord.tags[name].as_string() == value)
    query = query.order_by(SeriesRecord.key).offset(offset).limit(limit)
    return [_info(*row) for row in session.execute(query)]


@translates_errors
def get_series(session: Session, key: str) -> SeriesInfo:
    """A series by key; raise :class:`NotFoundError` if there is none."""
    row = session.execute(_with_latest().where(SeriesRecord.key == key)).first()
    if row is None:
        raise NotFoundError(f"series {key!r} does not exist")
    return _info(*row)


@translates_errors
def version_by_number(session: Session, key: str, number: int) -> VersionInfo:
    """Version ``number`` of a series; raise :class:`NotFoundError` if there is none."""
    row = session.execute(
        select(SeriesVersion, SeriesRecord).join(SeriesRecord)
        .where(SeriesRecord.key == key, SeriesVersion.number == number)).first()
    if row is None:
        raise NotFoundError(f"series {key!r} has no version {number}")
    return version_info(row[0], key)


def version_info(version: SeriesVersion, key: str) -> VersionInfo:
    """The value object of a stored version."""
    return VersionInfo(version.id, key, version.number, version.fingerprint, version.change,
                       version.n_obs, version.first_period, version.last_period,
                       version.created_at, version.created_by)


def _with_latest() -> Select[tuple[SeriesRecord, SeriesVersion]]:
    latest = (select(SeriesVersion.series_id, func.max(SeriesVersion.number).label("number"))
              .group_by(SeriesVersion.series_id).subquery())
    return (select(SeriesRecord, SeriesVersion)
            .join(latest, latest.c.series_id == SeriesRecord.id)
            .join(SeriesVersion, (SeriesVersion.series_id == SeriesRecord.id)
                  & (SeriesVersion.number == latest.c.number)))


def _info(record: SeriesRecord, version: SeriesVersion) -> SeriesInfo:
    return SeriesInfo(record.key, record.frequency, record.season_length, record.unit,
                      dict(record.tags), record.created_at, record.created_by,
                      version_info(version, record.key))
