"""The audit log read page by page, for auditors browsing a time range."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from storage.audit.log import AuditEntry, entry_of
from storage.db import AuditEvent
from storage.errors import translates_errors


@translates_errors
def audit_page(session: Session, *, start: datetime | None = None,
               end: datetime | None = None, after_seq: int = 0,
               limit: int | None = None) -> list[AuditEntry]:
    """Events with ``start <= occurred_at < end`` and ``seq > after_seq``, in log order."""
    query = select(AuditEvent).where(AuditEvent.seq > after_seq)
    if start is not None:
        query = query.where(AuditEvent.occurred_at >= start)
    if end is not None:
        query = query.where(AuditEvent.occurred_at < end)
    return [entry_of(event) for event in
            session.scalars(query.order_by(AuditEvent.seq).limit(limit))]
