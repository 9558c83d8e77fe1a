"""Storing and reading series: a posted series, an uploaded file of series (all or none),
appended actuals, and the series, versions and observations readers ask for. Each call is
one transaction; writes take the store's write lock."""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence

from sqlalchemy.orm import Session, sessionmaker

from backtest.series import Series
from backtest.tidy import FileSeries
from service.usecases.transactions import write
from storage.errors import ConflictError
from storage.series import (
    SaveOutcome,
    SeriesInfo,
    VersionInfo,
    find_series,
    get_series,
    list_versions,
    load_series,
    save_series_version,
    version_by_number,
)

__all__ = ["SaveOutcome", "SeriesInfo", "VersionInfo", "append", "find", "save_file",
           "save_one", "series_with_versions", "version_with_data"]


def save_one(sessions: sessionmaker[Session], series: Series, *, actor: str,
             unit: str | None, tags: Mapping[str, str] | None) -> SaveOutcome:
    """Store ``series`` as a new version of its key, unless the same data is stored."""
    def store(session: Session) -> SaveOutcome:
        return save_series_version(session, series, actor=actor, unit=unit, tags=tags)

    try:
        return write(sessions, store)
    except ConflictError:
        # Two clients posting the same new data at once: the loser's insert conflicts; on a
        # second try it finds the winner's version and answers like a repeated post.
        return write(sessions, store)


def save_file(sessions: sessionmaker[Session], parsed: Sequence[FileSeries], *, actor: str,
              tags: Mapping[str, str] | None) -> list[SaveOutcome]:
    """Store every series of an uploaded file in one transaction: all, or none."""
    return write(sessions, lambda session: [
        save_series_version(session, one.series, actor=actor, unit=one.unit, tags=tags)
        for one in parsed])


def append(sessions: sessionmaker[Session], key: str, extend: Callable[[Series], Series], *,
           actor: str) -> SaveOutcome:
    """Store ``extend(latest version)`` as the series' next version."""
    def store(session: Session) -> SaveOutcome:
        stored = load_series(session, get_series(session, key).latest.id)
        return save_series_version(session, extend(stored), actor=actor)

    return write(sessions, store)


def find(sessions: sessionmaker[Session], *, prefix: str | None,
         tags: Mapping[str, str] | None, limit: int, offset: int) -> list[SeriesInfo]:
    """Series whose key starts with ``prefix`` and that carry every tag, by key."""
    with sessions.begin() as session:
        return find_series(session, prefix=prefix, tags=tags, limit=limit, offset=offset)


def version_with_data(sessions: sessionmaker[Session], key: str,
                      number: int) -> tuple[VersionInfo, Series]:
    """One version of a series and its observations."""
    with sessions.begin() as session:
        version = version_by_number(session, key, number)
        return version, load_series(session, version.id)


def series_with_versions(sessions: sessionmaker[Session],
                         key: str) -> tuple[SeriesInfo, list[VersionInfo]]:
    """A series and all its versions, oldest first."""
    with sessions.begin() as session:
        return get_series(session, key), list_versions(session, key)
