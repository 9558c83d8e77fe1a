"""Append-only records are refused changes by the database and by the ORM session."""

from __future__ import annotations

import pytest
from sqlalchemy import select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from storage.db import Run, SeriesVersion
from storage.errors import IMMUTABLE_MARKER, ImmutableRecordError, translate
from storage.runs import fail_run, queue_run
from storage.series import save_series_version
from tests.storage.builders import (
    ACTOR,
    benchmark_candidates,
    monthly_series,
    run_and_store,
    small_plan,
)

RAW_CHANGES = [
    "UPDATE forecast SET point = point + 1",
    "DELETE FROM forecast_bound",
    "UPDATE score SET value = 0",
    "DELETE FROM series_result",
    "UPDATE observation SET value = 0",
    "UPDATE series_version SET created_by = 'mallory'",
    "DELETE FROM audit_event",
    "UPDATE audit_event SET actor = 'mallory'",
    "UPDATE run SET requested_by = 'mallory'",
    "DELETE FROM run",
]


@pytest.mark.parametrize("statement", RAW_CHANGES)
def test_database_refuses_changing_stored_records(session: Session, statement: str):
    run_and_store(session, [monthly_series("sales/north")])

    with pytest.raises(DBAPIError) as caught, session.begin_nested():
        session.execute(text(statement))

    assert IMMUTABLE_MARKER in str(caught.value)
    assert isinstance(translate(caught.value), ImmutableRecordError)


def test_database_allows_updating_a_run_until_it_is_final(session: Session):
    version = save_series_version(session, monthly_series("sales/north"), actor=ACTOR).version
    run = queue_run(session, series_version_ids=[version.id], candidates=benchmark_candidates(),
                    plan=small_plan(), actor=ACTOR)
    update = text("UPDATE run SET lease_owner = 'worker-9' WHERE id = :id")

    session.execute(update, {"id": run.id})
    fail_run(session, run.id, actor=ACTOR, reason="stopped")

    with pytest.raises(DBAPIError, match=IMMUTABLE_MARKER), session.begin_nested():
        session.execute(update, {"id": run.id})


def test_postgresql_refuses_truncate(session: Session):
    if session.get_bind().dialect.name != "postgresql":
        pytest.skip("TRUNCATE exists on PostgreSQL only")
    with pytest.raises(DBAPIError, match=IMMUTABLE_MARKER), session.begin_nested():
        session.execute(text("TRUNCATE forecast CASCADE"))


def test_session_refuses_orm_changes_to_stored_records(session: Session):
    run_id, versions, _ = run_and_store(session, [monthly_series("sales/north")])

    version = session.get_one(SeriesVersion, versions[0])
    version.created_by = "mallory"
    with pytest.raises(ImmutableRecordError, match="series_version"):
        session.flush()
    session.expire_all()

    session.delete(session.get_one(SeriesVersion, versions[0]))
    with pytest.raises(ImmutableRecordError, match="cannot be deleted"):
        session.flush()
    session.expunge_all()

    run = session.scalars(select(Run).where(Run.id == run_id)).one()
    run.status = "running"
    with pytest.raises(ImmutableRecordError, match="run"):
        session.flush()
