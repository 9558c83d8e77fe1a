"""The append-only audit log: every write leaves an event chained to the one before.

An event records who did what to which subject, when, and the digest of the content written
(see :mod:`storage.audit.contents`). Its ``hash`` is the SHA-256 of its own fields together with
the previous event's hash (``prev_hash``; the first event follows 64 zeros), so changing,
removing or inserting an event breaks the chain at that point. Appends are serialised: on
PostgreSQL by a transaction-level advisory lock, on SQLite by its single-writer lock.

Keyed chain: when the session carries an audit key (``FOLDLINE_AUDIT_KEY``, given to
:func:`storage.db.connection.session_factory`), each new event's hash is an HMAC-SHA256 of the same
fields under that key instead of a plain SHA-256. Someone with write access to the database
but not the key can then no longer alter an event and recompute the hashes after it.
Events written before the key was set keep their plain hashes; verification accepts such a
prefix but no plain event after a keyed one.
"""

from __future__ import annotations

import hashlib
import hmac
from dataclasses import dataclass
from datetime import UTC, datetime

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from storage.audit.digest import canonical_json, sha256_text
from storage.db import AUDIT_KEY_INFO, AuditEvent, utc_now
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
               digest: str, prev_hash: str, key: bytes | None = None) -> str:
    """The chain hash of an event's fields and its predecessor's hash: SHA-256, or
    HMAC-SHA256 under ``key`` when one is given."""
    fields = canonical_json([seq, occurred_at.astimezone(UTC).isoformat(), actor, action,
                             subject, digest, prev_hash])
    if key is None:
        return sha256_text(fields)
    return hmac.new(key, fields.encode(), hashlib.sha256).hexdigest()


def audit_key_of(session: Session) -> bytes | None:
    """The audit key the session's writes are keyed with, if any."""
    return session.info.get(AUDIT_KEY_INFO)


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
                                       prev_hash, audit_key_of(session)))
    session.add(event)
    session.flush()
    return entry_of(event)


def entry_of(event: AuditEvent) -> AuditEntry:
    """The value object of a stored event."""
    return AuditEntry(event.seq, event.occurred_at, event.actor, event.action, event.subject,
                      event.digest, event.prev_hash, event.hash)
