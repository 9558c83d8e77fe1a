"""Engine settings: the URL setting, the default SQLite file, SQLite connection pragmas."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import text

from storage.db import (
    URL_SETTING,
    database_url,
    default_sqlite_path,
    make_engine,
    session_factory,
)
from storage.errors import ConfigurationError, StoreUnavailableError, translates_errors


def test_url_setting_wins_over_the_default(tmp_path: Path):
    environ = {URL_SETTING: "postgresql+psycopg://db.example/foldline",
               "XDG_DATA_HOME": str(tmp_path)}

    assert database_url(environ) == "postgresql+psycopg://db.example/foldline"
    assert database_url({"XDG_DATA_HOME": str(tmp_path)}) == (
        f"sqlite:///{tmp_path}/foldline/foldline.db")
    assert default_sqlite_path({}) == Path.home() / ".local/share/foldline/foldline.db"


def test_sqlite_connections_use_wal_foreign_keys_and_a_busy_timeout(tmp_path: Path):
    engine = make_engine(f"sqlite:///{tmp_path}/nested/dir/store.db")

    with engine.connect() as connection:
        pragmas = [connection.exec_driver_sql(f"PRAGMA {name}").scalar()
                   for name in ("journal_mode", "foreign_keys", "busy_timeout")]
    engine.dispose()

    assert pragmas == ["wal", 1, 5000]
    assert (tmp_path / "nested/dir/store.db").exists()


def test_sqlite_savepoints_roll_back_only_their_part(tmp_path: Path):
    engine = make_engine(f"sqlite:///{tmp_path}/store.db")
    with session_factory(engine).begin() as session:
        session.execute(text("CREATE TABLE note (body TEXT)"))
        session.execute(text("INSERT INTO note VALUES ('kept')"))
        with pytest.raises(RuntimeError), session.begin_nested():
            session.execute(text("INSERT INTO note VALUES ('dropped')"))
            raise RuntimeError
    with engine.connect() as connection:
        assert connection.exec_driver_sql("SELECT body FROM note").scalars().all() == ["kept"]
    engine.dispose()


def test_bare_postgresql_urls_get_the_psycopg_driver():
    engine = make_engine("postgresql://user@db.example/foldline")

    assert engine.url.drivername == "postgresql+psycopg"
    engine.dispose()


def test_bad_urls_and_unreachable_servers_become_storage_errors():
    with pytest.raises(ConfigurationError, match="invalid database URL"):
        make_engine("not a url")
    engine = make_engine("postgresql+psycopg://nobody@127.0.0.1:1/none",
                         connect_args={"connect_timeout": 2})

    @translates_errors
    def ping() -> None:
        with engine.connect() as connection:
            connection.execute(text("SELECT 1"))

    with pytest.raises(StoreUnavailableError) as caught:
        ping()
    assert caught.value.__cause__ is not None
    engine.dispose()


def test_importing_storage_builds_no_engine_and_no_service(tmp_path: Path):
    code = ("import sys, storage.db.connection, storage.results.queries, storage.audit.verify,"
            " storage.db.migrate\n"
            "print(','.join(m for m in ('service', 'fastapi') if m in sys.modules))")
    env = {"XDG_DATA_HOME": str(tmp_path), "PATH": ""}

    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, env=env, cwd=Path(__file__).resolve().parents[2])

    assert out.stdout.strip() == ""
    assert list(tmp_path.iterdir()) == []
