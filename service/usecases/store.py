"""Opening the store named by the settings, for the command line and the server alike."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager

from sqlalchemy.orm import Session, sessionmaker

from service.settings import checked_settings
from storage.db import (
    BI_VIEWS,
    URL_SETTING,
    database_url,
    grant_bi_reader,
    make_engine,
    session_factory,
    upgrade,
)

__all__ = ["BI_VIEWS", "URL_SETTING", "grant_bi_reader_role", "migrate_store", "open_store",
           "store_sessions", "store_url"]


def store_url(url: str | None = None) -> str:
    """``url``, else ``FOLDLINE_DATABASE_URL``, else the embedded SQLite file's URL."""
    return url or database_url()


def store_sessions(url: str, audit_key: str | None
                   ) -> tuple[sessionmaker[Session], Callable[[], None]]:
    """Sessions on the store at ``url`` for a long-lived process (keying audit events with
    ``audit_key``), and the function that closes its connections when the process stops."""
    engine = make_engine(url)
    return session_factory(engine, audit_key), engine.dispose


@contextmanager
def open_store(url: str | None = None) -> Iterator[sessionmaker[Session]]:
    """Sessions on the store at ``url`` (default: ``FOLDLINE_DATABASE_URL``, else the
    embedded SQLite file), keying audit events with ``FOLDLINE_AUDIT_KEY`` when set; its
    connections are closed on exit. Raises ``InvalidSettingsError`` for invalid settings."""
    audit_key = checked_settings().audit_key
    engine = make_engine(store_url(url))
    try:
        yield session_factory(engine, audit_key)
    finally:
        engine.dispose()


def migrate_store(url: str | None = None) -> str:
    """Bring the store's schema to this code's revision; return the store's URL."""
    chosen = store_url(url)
    upgrade(chosen)
    return chosen


def grant_bi_reader_role(sessions: sessionmaker[Session], role: str) -> bool:
    """Let PostgreSQL role ``role`` read the BI views and nothing else (created without login
    if missing; ``True`` then)."""
    with sessions.begin() as session:
        return grant_bi_reader(session, role)
