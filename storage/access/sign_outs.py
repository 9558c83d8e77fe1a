"""Reviewer page sessions ended on the server, by the digest of their cookie value."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from storage.audit import sha256_text
from storage.db import PageSignOut, utc_now
from storage.errors import translates_errors


@translates_errors
def record_sign_out(session: Session, cookie_value: str, key_id: str) -> None:
    """End the session whose cookie is ``cookie_value``; ending it twice changes nothing."""
    digest = sha256_text(cookie_value)
    if session.get(PageSignOut, digest) is None:
        session.add(PageSignOut(session_digest=digest, key_id=key_id, signed_out_at=utc_now()))
        session.flush()


@translates_errors
def signed_out(session: Session, cookie_value: str) -> bool:
    """Whether the session whose cookie is ``cookie_value`` was ended by signing out."""
    digest = sha256_text(cookie_value)
    return session.scalar(select(PageSignOut.session_digest)
                          .where(PageSignOut.session_digest == digest)) is not None
