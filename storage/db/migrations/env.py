"""Alembic environment: Foldline's metadata, its engine settings, batch mode for SQLite.

The URL comes from, in order: a connection handed over in ``config.attributes`` (see
:func:`storage.db.migrate.upgrade`), the ``sqlalchemy.url`` option, ``FOLDLINE_DATABASE_URL``
or the default SQLite file (:func:`storage.db.connection.database_url`).
"""

from logging.config import fileConfig

from alembic import context
from sqlalchemy import Connection
from sqlalchemy.pool import NullPool

from storage.db.connection import database_url, make_engine
from storage.db.schema import Base

config = context.config
if config.config_file_name is not None:
    fileConfig(config.config_file_name, disable_existing_loggers=False)


def _url() -> str:
    return config.get_main_option("sqlalchemy.url") or database_url()


def _run(connection: Connection) -> None:
    # SQLite DDL is transactional here because storage.db.connection emits BEGIN itself.
    context.configure(connection=connection, target_metadata=Base.metadata,
                      render_as_batch=True, transactional_ddl=True)
    with context.begin_transaction():
        context.run_migrations()


def run_offline() -> None:
    context.configure(url=_url(), target_metadata=Base.metadata, render_as_batch=True,
                      literal_binds=True, dialect_opts={"paramstyle": "named"})
    with context.begin_transaction():
        context.run_migrations()


def run_online() -> None:
    connection = config.attributes.get("connection")
    if connection is not None:
        _run(connection)
        return
    engine = make_engine(_url(), poolclass=NullPool)
    with engine.connect() as connection:
        _run(connection)
    engine.dispose()


if context.is_offline_mode():
    run_offline()
else:
    run_online()
