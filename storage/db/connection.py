"""Engines and sessions for the one store named by ``FOLDLINE_DATABASE_URL``.

The setting is a SQLAlchemy URL. Without it the store is the SQLite file
``$XDG_DATA_HOME/foldline/foldline.db`` (``~/.local/share/foldline/foldline.db`` when
``XDG_DATA_HOME`` is unset); its directory is created on first use. Shared deployments use
PostgreSQL through psycopg 3, ``postgresql+psycopg://user@host/db`` (a bare
``postgresql://`` URL is given that driver).

SQLite connections get, on connect: WAL journal (readers do not block the writer), foreign
keys on, and a busy timeout. pysqlite's own transaction handling is switched off and
SQLAlchemy emits ``BEGIN`` itself, so SAVEPOINTs and DDL are transactional like on
PostgreSQL. Nothing here runs at import: engines exist only when :func:`make_engine` is
called.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import ArgumentError
from sqlalchemy.orm import Session, sessionmaker

from storage.db.guard import refuse_changes_to_frozen_records
from storage.errors import ConfigurationError

URL_SETTING = "FOLDLINE_DATABASE_URL"
SQLITE_BUSY_TIMEOUT_MS = 5000


def database_url(environ: Mapping[str, str] | None = None) -> str:
    """The store's URL: ``FOLDLINE_DATABASE_URL`` if set, else the default SQLite file."""
    environ = os.environ if environ is None else environ
    return environ.get(URL_SETTING) or f"sqlite:///{default_sqlite_path(environ)}"


def default_sqlite_path(environ: Mapping[str, str] | None = None) -> Path:
    """``$XDG_DATA_HOME/foldline/foldline.db``, with the XDG default for the data home."""
    environ = os.environ if environ is None else environ
    data_home = environ.get("XDG_DATA_HOME") or str(Path.home() / ".local" / "share")
    return Path(data_home) / "foldline" / "foldline.db"


def make_engine(url: str | URL, **options: Any) -> Engine:
    """Create an engine for ``url`` with Foldline's connection settings."""
    parsed = _parse(url)
    if parsed.get_backend_name() == "sqlite":
        return _sqlite_engine(parsed, **options)
    if parsed.drivername == "postgresql":
        parsed = parsed.set(drivername="postgresql+psycopg")
    return create_engine(parsed, pool_pre_ping=True, **options)


def session_factory(engine: Engine) -> sessionmaker[Session]:
    """Sessions bound to ``engine`` that refuse ORM changes to append-only records."""
    factory = sessionmaker(engine, expire_on_commit=False)
    event.listen(factory, "before_flush", refuse_changes_to_frozen_records)
    return factory


def _parse(url: str | URL) -> URL:
    try:
        return make_url(url)
    except ArgumentError as exc:
        raise ConfigurationError(f"invalid database URL: {exc}") from exc


def _sqlite_engine(url: URL, **options: Any) -> Engine:
    if url.database and url.database != ":memory:" and not url.database.startswith("file:"):
        Path(url.database).expanduser().parent.mkdir(parents=True, exist_ok=True)
    engine = create_engine(url, **options)
    event.listen(engine, "connect", _configure_sqlite_connection)
    event.listen(engine, "begin", _begin_sqlite_transaction)
    return engine


def _configure_sqlite_connection(dbapi_connection: Any, _record: Any) -> None:
    dbapi_connection.isolation_level = None
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA journal_mode=WAL")
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cursor.close()


def _begin_sqlite_transaction(connection: Any) -> None:
    connection.exec_driver_sql("BEGIN")
