"""Issuing API keys, for the ``foldline keys`` commands and the admin routes alike."""

from __future__ import annotations

import re

from sqlalchemy.orm import Session

from service.errors import FieldError, InvalidInputError
from service.key_tokens import Token, new_token, secret_hash
from service.ownership import parsed_scope
from storage.keys import KeyInfo, create_key

KEY_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.@+-]{0,199}")
"""Key names: they appear as the actor in the audit log, so no spaces or markup."""


def issue_key(session: Session, *, name: str, role: str, actor: str,
              scope: str | None = None) -> tuple[KeyInfo, Token]:
    """Store a new key and return it with its token, whose text is shown only this once.

    ``scope`` (submitter keys only) is the series-key prefix the key's team owns; see
    :mod:`service.ownership`."""
    if not KEY_NAME.fullmatch(name):
        message = (f"key name {name!r} must start with a letter or digit and hold only "
                   "letters, digits and _ . @ + - (at most 200)")
        raise InvalidInputError(message, errors=[FieldError("body", "/name", message)])
    stored_scope = parsed_scope(scope, role)
    token = new_token()
    key = create_key(session, key_id=token.key_id, name=name, role=role,
                     secret_hash=secret_hash(token.secret), actor=actor, scope=stored_scope)
    return key, token
