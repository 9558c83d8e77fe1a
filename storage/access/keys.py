"""API keys as stored: a public id, the SHA-256 of the secret (never the secret), a name, a role
and a scope (the series-key prefix the key's team owns; ``None``: every series).

Keys are append-only like everything else: revoking one adds an ``api_key_revocation`` row.
Creating and revoking are audited with the acting key's (or operator's) name. How a key's
text is made and checked is the service's business (:mod:`service.usecases.key_tokens`).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import Select, func, select
from sqlalchemy.orm import Session

from storage.audit import (
    as_row,
    key_digest,
    key_subject,
    lock_audit_log,
    record_event,
    revocation_digest,
)
from storage.db import ROLES, ApiKey, ApiKeyRevocation, AuditEvent, utc_now
from storage.errors import ConflictError, NotFoundError, translates_errors


@dataclass(frozen=True)
class KeyInfo:
    """A stored key without its secret hash."""

    id: str
    name: str
    role: str
    created_at: datetime
    created_by: str
    revoked_at: datetime | None
    revoked_by: str | None
    scope: str | None = None

    @property
    def active(self) -> bool:
        return self.revoked_at is None


@dataclass(frozen=True)
class KeyCredentials:
    """What authentication needs: the key, the hash its secret must match, and whether its
    stored rows (key and revocation) match the digests their audit events recorded."""

    key: KeyInfo
    secret_hash: str
    audited: bool


@translates_errors
def create_key(session: Session, *, key_id: str, name: str, role: str, secret_hash: str,
               actor: str, scope: str | None = None) -> KeyInfo:
    """Store a new key; names are unique over all keys, revoked ones included. The scope is
    part of the row the creation event digests, so it cannot be widened unnoticed."""
    if role not in ROLES:
        raise ConflictError(f"role {role!r} is unknown; use one of {', '.join(ROLES)}")
    if session.scalar(select(ApiKey.id).where(ApiKey.name == name)) is not None:
        raise ConflictError(f"a key named {name!r} exists already; key names are never reused")
    record = ApiKey(id=key_id, name=name, role=role, secret_hash=secret_hash,
                    created_at=utc_now(), created_by=actor, scope=scope)
    session.add(record)
    session.flush()
    record_event(session, actor=actor, action="api_key.created", subject=key_subject(key_id),
                 digest=key_digest([as_row(record)]))
    return _info(record, None)


@translates_errors
def find_credentials(session: Session, key_id: str) -> KeyCredentials | None:
    """The key with this public id and its secret hash, if stored.

    A key whose row was changed behind the API's back (a role promoted, a revocation
    deleted, a key inserted without its event) is not ``audited``.
    """
    row = session.execute(_with_revocation().where(ApiKey.id == key_id)).first()
    if row is None:
        return None
    key, revocation = row
    recorded = dict(session.execute(
        select(AuditEvent.action, AuditEvent.digest)
        .where(AuditEvent.subject == key_subject(key_id),
               AuditEvent.action.in_(("api_key.created", "api_key.revoked")))).tuples().all())
    audited = (recorded.get("api_key.created") == key_digest([as_row(key)])
               and recorded.get("api_key.revoked") == (
                   None if revocation is None else revocation_digest([as_row(revocation)])))
    return KeyCredentials(_info(key, revocation), key.secret_hash, audited)


@translates_errors
def list_keys(session: Session) -> list[KeyInfo]:
    """Every key, revoked ones included, oldest first."""
    rows = session.execute(_with_revocation().order_by(ApiKey.created_at, ApiKey.id))
    return [_info(*row) for row in rows]


@translates_errors
def revoke_key(session: Session, key_id: str, *, actor: str) -> KeyInfo:
    """Revoke a key; revoking a revoked key changes nothing and returns it as it is.

    The last active admin key is not revoked (:class:`ConflictError`): create another
    admin key first, so that someone can still manage keys.
    """
    lock_audit_log(session)
    row = session.execute(_with_revocation().where(ApiKey.id == key_id)).first()
    if row is None:
        raise NotFoundError(f"API key {key_id} does not exist")
    if row[1] is not None:
        return _info(*row)
    if row[0].role == "admin" and _active_admins(session) == 1:
        raise ConflictError(f"API key {key_id} is the last active admin key; create another "
                            "admin key before revoking it")
    revocation = ApiKeyRevocation(key_id=key_id, revoked_at=utc_now(), revoked_by=actor)
    session.add(revocation)
    session.flush()
    record_event(session, actor=actor, action="api_key.revoked", subject=key_subject(key_id),
                 digest=revocation_digest([as_row(revocation)]))
    return _info(row[0], revocation)


def _active_admins(session: Session) -> int:
    query = (select(func.count()).select_from(ApiKey).outerjoin(ApiKeyRevocation)
             .where(ApiKey.role == "admin", ApiKeyRevocation.key_id.is_(None)))
    return session.scalar(query) or 0


def _with_revocation() -> Select[tuple[ApiKey, ApiKeyRevocation]]:
    # Outer join: the revocation is None for a key not revoked (the row type cannot say so:
    # SQLAlchemy types select(A, B) as Select[tuple[A, B]], and Select is invariant).
    return select(ApiKey, ApiKeyRevocation).outerjoin(ApiKeyRevocation)


def _info(key: ApiKey, revocation: ApiKeyRevocation | None) -> KeyInfo:
    return KeyInfo(key.id, key.name, key.role, key.created_at, key.created_by,
                   revocation.revoked_at if revocation else None,
                   revocation.revoked_by if revocation else None, key.scope)
