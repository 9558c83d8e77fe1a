"""Bulk inserts of many rows, at the driver's speed where the values need no conversion.

Rows are dicts holding every column. Small batches, and tables with JSON or timestamp
columns (whose values SQLAlchemy must convert), go through Core ``insert()`` as one
executemany. Large batches of plain values (numbers, strings, booleans) skip SQLAlchemy's
per-row parameter processing: on PostgreSQL they are streamed with psycopg's
``COPY ... FROM STDIN``, on SQLite passed to ``executemany`` as tuples. Both run on the
session's own connection, inside the caller's transaction. ``bench/storage_bench.py``
measures the difference.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from operator import itemgetter
from typing import Any, cast

import psycopg
from sqlalchemy import JSON, Table, insert
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from storage.db.types import UtcDateTime

FAST_MIN_ROWS = 500


def insert_rows(session: Session, table: Table, rows: Sequence[dict[str, Any]]) -> None:
    """Insert ``rows`` (dicts with every column of ``table``) in bulk."""
    if not rows:
        return
    if len(rows) < FAST_MIN_ROWS or not _plain(table):
        session.execute(insert(table), rows)
        return
    names = list(table.columns.keys())
    values = map(itemgetter(*names), rows)
    session.flush()
    if session.get_bind().dialect.name == "postgresql":
        _copy(session, table, names, values)
    else:
        _executemany(session, table, names, values)


def _plain(table: Table) -> bool:
    return not any(isinstance(c.type, JSON | UtcDateTime) for c in table.columns)


def _executemany(session: Session, table: Table, names: list[str],
                 values: Iterable[tuple[Any, ...]]) -> None:
    quote = session.get_bind().dialect.identifier_preparer.quote
    statement = (f"INSERT INTO {quote(table.name)} ({', '.join(quote(n) for n in names)}) "
                 f"VALUES ({', '.join('?' for _ in names)})")
    session.connection().exec_driver_sql(statement, list(values))


def _copy(session: Session, table: Table, names: list[str],
          values: Iterable[tuple[Any, ...]]) -> None:
    quote = session.get_bind().dialect.identifier_preparer.quote
    statement = (f"COPY {quote(table.name)} ({', '.join(quote(n) for n in names)}) "
                 "FROM STDIN")
    # COPY runs only on PostgreSQL, whose driver here is psycopg; a checked-out connection
    # always has its driver connection (SQLAlchemy types it as optional and Any).
    driver_connection = cast(psycopg.Connection[Any],
                             session.connection().connection.driver_connection)
    try:
        with driver_connection.cursor() as cursor, cursor.copy(statement) as copy:
            for row in values:
                copy.write_row(row)
    except psycopg.Error as exc:
        # Re-raised as SQLAlchemy's class for this driver error, as if Core had run it.
        raise DBAPIError.instance(statement, None, exc, psycopg.Error) from exc
