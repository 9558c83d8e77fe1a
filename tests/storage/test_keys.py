"""API keys as stored: created once by name, revoked by an added row, never changed."""

from __future__ import annotations

import pytest
from sqlalchemy import select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from storage.access import create_key, find_credentials, list_keys, revoke_key
from storage.audit import verify_audit_log
from storage.db import AuditEvent
from storage.errors import IMMUTABLE_MARKER, ConflictError, NotFoundError
from tests.storage.builders import drop_guards

HASH = "ab" * 32


def _create(session: Session, key_id: str, name: str, role: str = "reader"):
    return create_key(session, key_id=key_id, name=name, role=role, secret_hash=HASH,
                      actor="ops")


def test_a_key_is_found_by_its_id_with_its_hash(session: Session):
    _create(session, "k1", "bi-tool")

    found = find_credentials(session, "k1")

    assert found is not None and found.secret_hash == HASH
    assert (found.key.name, found.key.role, found.key.active) == ("bi-tool", "reader", True)
    assert find_credentials(session, "k2") is None


def test_revoking_adds_a_revocation_and_is_idempotent(session: Session):
    _create(session, "k1", "bi-tool")

    first = revoke_key(session, "k1", actor="admin-1")
    again = revoke_key(session, "k1", actor="admin-2")

    assert first.revoked_by == again.revoked_by == "admin-1"
    assert not find_credentials(session, "k1").key.active
    assert [k.active for k in list_keys(session)] == [False]
    with pytest.raises(NotFoundError):
        revoke_key(session, "nope", actor="admin-1")


def test_names_are_never_reused_and_roles_are_known(session: Session):
    _create(session, "k1", "bi-tool")
    revoke_key(session, "k1", actor="ops")

    with pytest.raises(ConflictError, match="never reused"), session.begin_nested():
        _create(session, "k2", "bi-tool")
    with pytest.raises(ConflictError, match="role"), session.begin_nested():
        _create(session, "k3", "other", role="owner")


def test_key_writes_are_audited_and_the_chain_verifies(session: Session):
    _create(session, "k1", "bi-tool")
    revoke_key(session, "k1", actor="admin-1")

    events = session.execute(select(AuditEvent.action, AuditEvent.actor, AuditEvent.subject)
                             .order_by(AuditEvent.seq)).all()

    assert [tuple(e) for e in events] == [("api_key.created", "ops", "api_key/k1"),
                                          ("api_key.revoked", "admin-1", "api_key/k1")]
    assert verify_audit_log(session).ok


@pytest.mark.parametrize("statement", [
    "UPDATE api_key SET role = 'admin'", "DELETE FROM api_key_revocation",
    "UPDATE api_key SET secret_hash = 'x'", "DELETE FROM api_key"])
def test_the_database_refuses_changing_keys(session: Session, statement: str):
    _create(session, "k1", "bi-tool")
    revoke_key(session, "k1", actor="ops")

    with pytest.raises(DBAPIError, match=IMMUTABLE_MARKER), session.begin_nested():
        session.execute(text(statement))


def test_the_last_active_admin_key_is_not_revoked(session: Session):
    _create(session, "a1", "ops-1", role="admin")
    _create(session, "a2", "ops-2", role="admin")
    _create(session, "r1", "bi-tool")

    revoke_key(session, "a1", actor="ops-2")
    with pytest.raises(ConflictError, match="last active admin"), session.begin_nested():
        revoke_key(session, "a2", actor="ops-2")
    revoke_key(session, "r1", actor="ops-2")

    assert [(k.id, k.active) for k in list_keys(session)] == [("a1", False), ("a2", True),
                                                              ("r1", False)]


def _verification(session: Session) -> str | None:
    return verify_audit_log(session).problem


def test_a_role_promoted_behind_the_api_breaks_verification_and_the_key(session: Session):
    _create(session, "k1", "bi-tool")
    assert find_credentials(session, "k1").audited and _verification(session) is None

    drop_guards(session, "api_key")
    session.execute(text("UPDATE api_key SET role = 'admin' WHERE id = 'k1'"))
    session.expire_all()

    assert not find_credentials(session, "k1").audited
    assert "api_key/k1" in _verification(session)


def test_a_deleted_revocation_breaks_verification_and_the_key(session: Session):
    _create(session, "k1", "bi-tool")
    revoke_key(session, "k1", actor="ops")
    assert find_credentials(session, "k1").audited

    drop_guards(session, "api_key_revocation")
    session.execute(text("DELETE FROM api_key_revocation WHERE key_id = 'k1'"))
    session.expire_all()

    found = find_credentials(session, "k1")
    assert found.key.active and not found.audited  # looks active, but is refused
    assert "api_key/k1" in _verification(session)


def test_a_key_inserted_behind_the_api_breaks_verification_and_the_key(session: Session):
    _create(session, "k1", "bi-tool")
    session.execute(text(
        "INSERT INTO api_key (id, name, role, secret_hash, created_at, created_by) "
        f"VALUES ('k9', 'forged', 'admin', '{HASH}', '2026-01-01 00:00:00+00:00', 'ops')"))

    assert not find_credentials(session, "k9").audited
    assert "api_key/k9 is stored but no api_key.created event" in _verification(session)
