"""Opening the store named by the settings, for the command line and the server alike."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager

from sqlalchemy.orm import Session, sessionmaker

from storage.db import URL_SETTING, database_url, make_engine, session_factory, upgrade

__all__ = ["URL_SETTING", "migrate_store", "open_store", "store_sessions", "store_url"]


def store_url(url: str | None = None) -> str:
    """``url``, else ``FOLDLINE_DATABASE_URL``, else the embedded SQLite file's URL."""
    return url or database_url()


def store_sessions(url: str) -> tuple[sessionmaker[Session], Callable[[], None]]:
    """Sessions on the store at ``url`` for a long-lived process, and the function that
    closes its connections when the process stops."""
    engine = make_engine(url)
    return session_factory(engine), engine.dispose


@contextmanager
def open_store(url: str | None = None) -> Iterator[sessionmaker[Session]]:
    """Sessions on the store at ``url`` (default: ``FOLDLINE_DATABASE_URL``, else the
    embedded SQLite file); its connections are closed on exit."""
    engine = make_engine(store_url(url))
    try:
        yield session_factory(engine)
    finally:
        engine.dispose()


def migrate_store(url: str | None = None) -> str:
    """Bring the store's schema to this code's revision; return the store's URL."""
    chosen = store_url(url)
    upgrade(chosen)
    return chosen
