"""The append-only audit log: every write leaves an event chained to the one before.

An event records who did what to which subject, when, and the digest of the content written
(see :mod:`storage.audit.contents`). Its ``hash`` is the SHA-256 of its own fields together with
the previous event's hash (``prev_hash``; the first event follows 64 zeros), so changing,
removing or inserting an event breaks the chain at that point. Appends are serialised: on
PostgreSQL by a transaction-level advisory lock, on SQLite by its single-writer lock.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from storage.audit.digest import canonical_json, sha256_text
from storage.db import AuditEvent, utc_now
from storage.errors import translates_errors

GENESIS_HASH = "0" * 64
_APPEND_LOCK = 0x466F6C64


@dataclass(frozen=True)
class AuditEntry:
    """One audit event as stored."""

    seq: int
    occurred_at: datetime
    actor: str
    action: str
    subject: str
    digest: str
    prev_hash: str
    hash: str


def event_hash(seq: int, occurred_at: datetime, actor: str, action: str, subject: str,
               digest: str, prev_hash: str) -> str:
    """The chain hash of an event's fields and its predecessor's hash."""
    fields = [seq, occurred_at.astimezone(UTC).isoformat(), actor, action, subject, digest,
              prev_hash]
    return sha256_text(canonical_json(fields))


def lock_audit_log(session: Session) -> None:
    """Serialise writers on the audit log until the transaction ends (PostgreSQL advisory
    lock; SQLite's single writer lock already does this). Take it before checking whether
    a shared record exists, so a concurrent writer sees the other's row, not a conflict."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(select(func.pg_advisory_xact_lock(_APPEND_LOCK)))


@translates_errors
def record_event(session: Session, *, actor: str, action: str, subject: str,
                 digest: str) -> AuditEntry:
    """Append an event after the latest one."""
    lock_audit_log(session)
    last = session.execute(
        select(AuditEvent.seq, AuditEvent.hash).order_by(AuditEvent.seq.desc()).limit(1)
    ).first()
    seq, prev_hash = (last.seq + 1, last.hash) if last else (1, GENESIS_HASH)
    occurred_at = utc_now()
    event = AuditEvent(seq=seq, occurred_at=occurred_at, actor=actor, action=action,
                       subject=subject, digest=digest, prev_hash=prev_hash,
                       hash=event_hash(seq, occurred_at, actor, action, subject, digest,
                                       prev_hash))
    session.add(event)
    session.flush()
    return entry_of(event)


def entry_of(event: AuditEvent) -> AuditEntry:
    """The value object of a stored event."""
    return AuditEntry(event.seq, event.occurred_at, event.actor, event.action, event.subject,
                      event.digest, event.prev_hash, event.hash)
