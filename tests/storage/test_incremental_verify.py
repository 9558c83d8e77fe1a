"""Verification from the last verified head, and the keyed chain.

The routine (incremental) pass reads only the events after the head it last verified; the
full pass re-reads everything. Tampering is done as someone with database access would:
raw SQL after dropping the append-only triggers.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
from sqlalchemy import func, select, text
from sqlalchemy.orm import Session, sessionmaker

from service.usecases.audit_verification import Verifier
from storage.audit import (
    AuditReport,
    record_verified,
    verify_audit_log,
    verify_incrementally,
)
from storage.audit.contents import stored_digest
from storage.audit.log import event_hash
from storage.db import AuditEvent, AuditVerification, make_engine, session_factory
from tests.storage.builders import drop_guards, monthly_series, run_and_store
from tests.storage.conftest import migrated_store

KEY = "a-test-secret-of-enough-length"


@pytest.fixture
def stores(fresh_url: str) -> Iterator[tuple[sessionmaker[Session], sessionmaker[Session]]]:
    """Plain and keyed session factories on one committed store."""
    engine = make_engine(fresh_url)
    yield session_factory(engine), session_factory(engine, KEY)
    engine.dispose()


def _incremental(sessions: sessionmaker[Session]) -> AuditReport:
    with sessions.begin() as session:
        report = verify_incrementally(session)
    if report.ok:
        with sessions.begin() as session:
            record_verified(session, report)
    return report


def _full(sessions: sessionmaker[Session]) -> AuditReport:
    with sessions.begin() as session:
        return verify_audit_log(session)


def _store(sessions: sessionmaker[Session], key: str, seed: int) -> None:
    with sessions.begin() as session:
        run_and_store(session, [monthly_series(key, seed=seed)])


def _events(sessions: sessionmaker[Session]) -> int:
    with sessions.begin() as session:
        return session.scalar(select(func.count()).select_from(AuditEvent)) or 0


def test_a_tamper_before_the_head_is_the_full_pass_s_to_find(stores):
    plain, _ = stores
    _store(plain, "sales/north", 1)
    first = _incremental(plain)
    before = _events(plain)
    _store(plain, "sales/south", 2)
    with plain.begin() as session:  # alter a score of the first run, verified before
        drop_guards(session, "score")
        session.execute(text("UPDATE score SET value = value / 2 WHERE metric = 'mase' "
                             "AND run_id = 1"))

    second = _incremental(plain)
    full = _full(plain)

    assert first.ok and first.mode == "full" and first.events_checked == before
    assert second.ok and second.mode == "incremental" and second.from_seq == before
    assert second.events_checked == _events(plain) - before  # only the rows after the head
    assert not full.ok and "series_result/1/" in (full.problem or "")


def test_a_tamper_after_the_head_is_caught_by_the_incremental_pass(stores):
    plain, _ = stores
    _store(plain, "sales/north", 1)
    _incremental(plain)
    _store(plain, "sales/south", 2)
    with plain.begin() as session:
        drop_guards(session, "forecast")
        session.execute(text("UPDATE forecast SET point = point * 1.01 WHERE run_id = 2"))

    report = _incremental(plain)

    assert not report.ok and report.mode == "incremental"
    assert "series_result/2/" in (report.problem or "")


def test_a_record_added_behind_the_log_after_the_head_is_caught(stores):
    plain, _ = stores
    _store(plain, "sales/north", 1)
    _incremental(plain)
    with plain.begin() as session:
        session.execute(text(  # stamped like the first series, within the overlap
            "INSERT INTO series (key, frequency, season_length, unit, tags, created_at, "
            "created_by) SELECT 'forged', frequency, season_length, unit, tags, created_at, "
            "created_by FROM series"))

    report = _incremental(plain)

    assert not report.ok and "no series.created event vouches" in (report.problem or "")


@pytest.mark.parametrize("change", ["rewrite", "cut"])
def test_a_rewritten_or_cut_log_before_the_head_is_caught(stores, change: str):
    plain, _ = stores
    _store(plain, "sales/north", 1)
    head = _incremental(plain).head_seq
    with plain.begin() as session:
        drop_guards(session, "audit_event")
        if change == "cut":
            session.execute(text("DELETE FROM audit_event WHERE seq = :s"), {"s": head})
        else:
            session.execute(text("UPDATE audit_event SET actor = 'someone' WHERE seq = :s"),
                            {"s": head})
            _rehash_from(session, head)

    report = _incremental(plain)

    assert not report.ok and report.broken_at == head
    assert ("was cut back" if change == "cut" else "was rewritten") in (report.problem or "")


def test_a_forged_verified_head_is_not_trusted(stores):
    _, keyed = stores
    _store(keyed, "sales/north", 1)
    _incremental(keyed)
    with keyed.begin() as session:
        session.execute(text("UPDATE audit_verification SET seq = seq + 5"))

    report = _incremental(keyed)

    assert report.ok and report.mode == "full" and report.from_seq == 0


def _rehash_from(session: Session, seq: int, key: bytes | None = None) -> None:
    """Recompute every hash from ``seq`` on, as an attacker with the database would."""
    events = session.scalars(select(AuditEvent).where(AuditEvent.seq >= seq - 1)
                             .order_by(AuditEvent.seq)).all()
    previous = events[0].hash if events[0].seq < seq else None
    for event in events:
        if event.seq < seq:
            continue
        digest = stored_digest(session, event.action, event.subject) or event.digest
        prev_hash = previous or event.prev_hash
        new_hash = event_hash(event.seq, event.occurred_at, event.actor, event.action,
                              event.subject, digest, prev_hash, key)
        session.execute(text("UPDATE audit_event SET digest = :d, prev_hash = :p, hash = :h "
                             "WHERE seq = :s"),
                        {"d": digest, "p": prev_hash, "h": new_hash, "s": event.seq})
        previous = new_hash


def test_keyed_events_verify_only_with_the_key(stores):
    plain, keyed = stores
    _store(plain, "sales/north", 1)  # written before the key was set
    keyed_from = _events(plain) + 1
    _store(keyed, "sales/south", 2)

    with_key, without_key = _full(keyed), _full(plain)

    assert with_key.ok and with_key.keyed_from == keyed_from
    assert not without_key.ok and without_key.broken_at == keyed_from
    assert "needs FOLDLINE_AUDIT_KEY" in (without_key.problem or "")


@pytest.mark.parametrize(("attacker_key", "found"),
                         [(None, "rewritten without the audit key"),
                          (b"a-guessed-secret-of-some-length", "was altered")])
def test_a_score_change_rehashed_without_the_key_is_caught(stores, attacker_key: bytes | None,
                                                           found: str):
    """The attack that passed before: alter a score, recompute every later hash."""
    _, keyed = stores
    _store(keyed, "sales/north", 1)
    with keyed.begin() as session:
        for table in ("score", "audit_event"):
            drop_guards(session, table)
        session.execute(text("UPDATE score SET value = value / 2 WHERE metric = 'mase'"))
        first = session.scalar(select(func.min(AuditEvent.seq))
                               .where(AuditEvent.action == "results.written"))
        _rehash_from(session, first, attacker_key)

    report = _full(keyed)

    assert not report.ok and report.broken_at == first
    assert found in (report.problem or "")


def test_plain_events_after_keyed_ones_are_a_rewrite(stores):
    plain, keyed = stores
    _store(keyed, "sales/north", 1)
    _store(plain, "sales/south", 2)  # a writer without the key, after keyed events

    report = _full(keyed)

    assert not report.ok and "plain hash after keyed event 1" in (report.problem or "")


@pytest.mark.postgres
def test_concurrent_calls_share_one_verification(tmp_path: Path):
    """Another process's verification holds PostgreSQL's lock; this process's four calls
    wait for it and then share one pass."""
    with migrated_store("postgresql", tmp_path) as url:
        engine = make_engine(url)
        _calls_share_one_verification(url, session_factory(engine))
        engine.dispose()


def _calls_share_one_verification(url: str, plain: sessionmaker[Session]) -> None:
    _store(plain, "sales/north", 1)
    verifier = Verifier(plain)
    holder = make_engine(url)
    with holder.connect() as connection:  # another server's verification holds the lock
        connection.execute(text("SELECT pg_advisory_lock(:k)"), {"k": 0x466F6C65})
        with ThreadPoolExecutor(4) as pool:
            started = threading.Event()
            first = pool.submit(lambda: (started.set(), verifier.verify())[1])
            started.wait()
            while verifier._running is None:
                threading.Event().wait(0.01)
            others = [pool.submit(verifier.verify) for _ in range(3)]
            threading.Event().wait(0.3)
            assert not first.done() and not any(o.done() for o in others)
            connection.execute(text("SELECT pg_advisory_unlock(:k)"), {"k": 0x466F6C65})
            reports = [first.result(10)] + [o.result(10) for o in others]
    holder.dispose()

    assert all(r is reports[0] for r in reports) and reports[0].ok
    with plain.begin() as session:
        assert session.scalar(select(func.count()).select_from(AuditVerification)) == 1
