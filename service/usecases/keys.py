"""Managing API keys (issue, list, revoke), for the ``foldline keys`` commands and the admin
routes alike; each owns its transaction."""

from __future__ import annotations

import re

from sqlalchemy.orm import Session, sessionmaker

from service.errors import FieldError, InvalidInputError
from service.usecases.key_tokens import Token, new_token, secret_hash
from service.usecases.transactions import write
from storage.access import KeyInfo, create_key, list_keys, revoke_key
from storage.db import ROLES

__all__ = ["ROLES", "KeyInfo", "all_keys", "create_api_key", "issue_key", "revoke_api_key"]

KEY_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.@+-]{0,199}")
"""Key names: they appear as the actor in the audit log, so no spaces or markup."""


def issue_key(session: Session, *, name: str, role: str, actor: str) -> tuple[KeyInfo, Token]:
    """Store a new key and return it with its token, whose text is shown only this once."""
    if not KEY_NAME.fullmatch(name):
        message = (f"key name {name!r} must start with a letter or digit and hold only "
                   "letters, digits and _ . @ + - (at most 200)")
        raise InvalidInputError(message, errors=[FieldError("body", "/name", message)])
    token = new_token()
    key = create_key(session, key_id=token.key_id, name=name, role=role,
                     secret_hash=secret_hash(token.secret), actor=actor)
    return key, token


def create_api_key(sessions: sessionmaker[Session], *, name: str, role: str,
                   actor: str) -> tuple[KeyInfo, Token]:
    """:func:`issue_key` in its own write transaction."""
    return write(sessions, lambda session: issue_key(session, name=name, role=role,
                                                     actor=actor))


def all_keys(sessions: sessionmaker[Session]) -> list[KeyInfo]:
    """Every key, revoked ones included."""
    with sessions.begin() as session:
        return list_keys(session)


def revoke_api_key(sessions: sessionmaker[Session], key_id: str, *, actor: str) -> KeyInfo:
    """Revoke a key: requests with it are refused from then on."""
    return write(sessions, lambda session: revoke_key(session, key_id, actor=actor))
