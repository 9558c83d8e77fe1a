"""Stores for the storage tests: a migrated SQLite file and a migrated PostgreSQL database.

Every test runs against both (the ``engine`` fixture is parametrised) inside an outer
transaction that is rolled back, so tests see an empty store and leave nothing behind.
PostgreSQL is the server on 127.0.0.1:5432 (``FOLDLINE_TEST_POSTGRES_URL`` overrides);
each test session creates and drops its own database. If the server is unreachable the
PostgreSQL tests are skipped, unless ``CI=true``, where they fail.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest
from sqlalchemy import Engine, create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm import Session

from storage.db import make_engine, session_factory, upgrade

SERVER_URL = os.environ.get("FOLDLINE_TEST_POSTGRES_URL",
                            "postgresql+psycopg://postgres@127.0.0.1:5432/test")
BACKENDS = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)]


@contextmanager
def postgres_database() -> Iterator[str]:
    """A new, empty PostgreSQL database, dropped afterwards; skip or fail if unreachable."""
    server = create_engine(SERVER_URL, isolation_level="AUTOCOMMIT",
                           connect_args={"connect_timeout": 3})
    name = f"foldline_test_{uuid.uuid4().hex[:12]}"
    try:
        with server.connect() as connection:
            connection.execute(text(f'CREATE DATABASE "{name}"'))
    except OperationalError as exc:
        server.dispose()
        reason = f"PostgreSQL at {SERVER_URL} is unreachable: {exc.orig}"
        if os.environ.get("CI") == "true":
            pytest.fail(reason)
        pytest.skip(reason)
    try:
        yield make_url(SERVER_URL).set(database=name).render_as_string(hide_password=False)
    finally:
        with server.connect() as connection:
            connection.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        server.dispose()


@contextmanager
def migrated_store(backend: str, directory: Path) -> Iterator[str]:
    """The URL of a freshly migrated store of ``backend``."""
    if backend == "sqlite":
        url = f"sqlite:///{directory / 'foldline.db'}"
        upgrade(url)
        yield url
        return
    with postgres_database() as url:
        upgrade(url)
        yield url


@pytest.fixture(scope="session", params=BACKENDS)
def store_url(request: pytest.FixtureRequest,
              tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """One migrated store per backend, shared by the whole test session."""
    with migrated_store(request.param, tmp_path_factory.mktemp("store")) as url:
        yield url


@pytest.fixture(scope="session")
def engine(store_url: str) -> Iterator[Engine]:
    engine = make_engine(store_url)
    yield engine
    engine.dispose()


@pytest.fixture
def session(engine: Engine) -> Iterator[Session]:
    """A session inside an outer transaction; ``session.begin()`` opens a SAVEPOINT."""
    with engine.connect() as connection:
        outer = connection.begin()
        session = session_factory(engine)(bind=connection,
                                          join_transaction_mode="create_savepoint")
        yield session
        session.close()
        outer.rollback()


@pytest.fixture(params=BACKENDS)
def fresh_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """A store of its own for tests that commit for real."""
    with migrated_store(request.param, tmp_path) as url:
        yield url
