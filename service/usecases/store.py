"""Opening the store named by the settings, for the command line and the server alike."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

from sqlalchemy.orm import Session, sessionmaker

from storage.db import URL_SETTING, database_url, make_engine, session_factory, upgrade

__all__ = ["URL_SETTING", "migrate_store", "open_store"]


@contextmanager
def open_store(url: str | None = None) -> Iterator[sessionmaker[Session]]:
    """Sessions on the store at ``url`` (default: ``FOLDLINE_DATABASE_URL``, else the
    embedded SQLite file); its connections are closed on exit."""
    engine = make_engine(url or database_url())
    try:
        yield session_factory(engine)
    finally:
        engine.dispose()


def migrate_store(url: str | None = None) -> str:
    """Bring the store's schema to this code's revision; return the store's URL."""
    chosen = url or database_url()
    upgrade(chosen)
    return chosen
