"""The audit log: a hash chain over every write, and checks of the content it vouches for.

Tampering is done the way an attacker with database access would: raw SQL, dropping the
append-only triggers first. Each test runs in a rolled-back transaction, so the triggers
come back afterwards (DDL is transactional on both backends here).
"""

from __future__ import annotations

from datetime import timedelta

import pytest
from sqlalchemy import select, text
from sqlalchemy.orm import Session

from storage.audit import audit_page, verify_audit_log
from storage.audit.log import GENESIS_HASH
from storage.db import AuditEvent
from tests.storage.builders import monthly_series, run_and_store


def _store_two_runs(session: Session) -> tuple[int, list[int]]:
    run_and_store(session, [monthly_series("sales/north", seed=1)])
    run_id, versions, _ = run_and_store(session, [monthly_series("sales/south", seed=2),
                                                  monthly_series("sales/east", seed=3)])
    return run_id, versions


def _unprotect(session: Session, table: str) -> None:
    if session.get_bind().dialect.name == "postgresql":
        trigger = "run_frozen_when_final" if table == "run" else f"{table}_append_only"
        session.execute(text(f"DROP TRIGGER {trigger} ON {table}"))
        return
    suffixes = ["no_update_when_final", "no_delete"] if table == "run" else ["no_update",
                                                                              "no_delete"]
    for suffix in suffixes:
        session.execute(text(f"DROP TRIGGER {table}_{suffix}"))


def _event_seq(session: Session, action: str, subject: str) -> int:
    return session.scalars(select(AuditEvent.seq).where(AuditEvent.action == action,
                                                        AuditEvent.subject == subject)).one()


def test_every_write_is_chained_and_verifies(session: Session):
    _store_two_runs(session)
    events = session.scalars(select(AuditEvent).order_by(AuditEvent.seq)).all()

    report = verify_audit_log(session)

    assert report.ok and report.problem is None and report.broken_at is None
    assert report.events_checked == len(events) > 0
    assert report.head_hash == events[-1].hash
    assert events[0].prev_hash == GENESIS_HASH
    assert all(b.prev_hash == a.hash for a, b in zip(events, events[1:]))
    actions = {e.action for e in events}
    assert actions == {"series.created", "series_version.created", "candidate.registered",
                       "plan.registered", "run.queued", "run.started", "results.written",
                       "run.finished"}


UNIT = "AND run_id = :run AND series_version_id = :version"
TAMPERING = [
    ("forecast", f"UPDATE forecast SET point = point * 1.01 WHERE horizon = 2 {UNIT}",
     "results.written"),
    ("score", f"UPDATE score SET value = value / 2 WHERE metric = 'mase' {UNIT}",
     "results.written"),
    ("forecast_bound", f"DELETE FROM forecast_bound WHERE level = 95 {UNIT}",
     "results.written"),
    ("fold_result", f"UPDATE fold_result SET status = 'failed' WHERE fold = 0 {UNIT}",
     "results.written"),
    ("run", "UPDATE run SET software = NULL WHERE id = :run", "run.finished"),
]


@pytest.mark.parametrize(("table", "statement", "action"), TAMPERING,
                         ids=[case[0] for case in TAMPERING])
def test_altering_stored_results_behind_the_api_is_caught(session: Session, table: str,
                                                          statement: str, action: str):
    run_id, versions = _store_two_runs(session)
    _unprotect(session, table)

    changed = session.execute(text(statement), {"run": run_id, "version": versions[1]})
    report = verify_audit_log(session)

    assert changed.rowcount > 0
    assert not report.ok
    subject = (f"run/{run_id}" if action == "run.finished"
               else f"series_result/{run_id}/{versions[1]}")
    assert report.broken_at == _event_seq(session, action, subject)
    assert subject in report.problem


def test_altering_observations_of_a_version_is_caught(session: Session):
    _, versions = _store_two_runs(session)
    _unprotect(session, "observation")

    session.execute(text("UPDATE observation SET value = value + 0.5 "
                         "WHERE series_version_id = :v AND position = 0"), {"v": versions[0]})
    report = verify_audit_log(session)

    subject = f"series_version/{versions[0]}"
    assert report.broken_at == _event_seq(session, "series_version.created", subject)
    assert subject in report.problem


def test_altering_an_event_breaks_the_chain_at_that_event(session: Session):
    _store_two_runs(session)
    _unprotect(session, "audit_event")

    session.execute(text("UPDATE audit_event SET actor = 'mallory' WHERE seq = 5"))
    report = verify_audit_log(session)

    assert (report.broken_at, report.events_checked) == (5, 4)
    assert "altered" in report.problem


def test_removing_an_event_breaks_the_chain_after_it(session: Session):
    _store_two_runs(session)
    _unprotect(session, "audit_event")

    session.execute(text("DELETE FROM audit_event WHERE seq = 7"))
    report = verify_audit_log(session)

    assert report.broken_at == 8
    assert "event 7 is missing" in report.problem


def test_a_record_added_behind_the_log_is_caught(session: Session):
    _store_two_runs(session)

    session.execute(text("INSERT INTO candidate (id, family, spec, created_at) VALUES "
                         "('c0000000000000000', 'benchmark', '{}', '2030-01-01 00:00:00')"))
    report = verify_audit_log(session)

    assert report.broken_at is None and not report.ok
    assert "candidate/c0000000000000000" in report.problem


def test_events_in_a_time_range(session: Session):
    _store_two_runs(session)
    events = session.scalars(select(AuditEvent).order_by(AuditEvent.seq)).all()
    start, end = events[3].occurred_at, events[-2].occurred_at

    between = audit_page(session, start=start, end=end)

    expected = [e.seq for e in events if start <= e.occurred_at < end]
    assert [e.seq for e in between] == expected
    assert 0 < len(between) < len(events)
    assert audit_page(session, start=end + timedelta(days=1), end=end + timedelta(days=2)) == []
