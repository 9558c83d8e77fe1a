"""The ORM-side refusal of changes to append-only records (the triggers are the DB side)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from sqlalchemy import inspect
from sqlalchemy.orm import Session

from storage.db.schema import FINAL_STATUSES, Base, Run
from storage.errors import ImmutableRecordError


def refuse_changes_to_frozen_records(session: Session, _context: Any, _instances: Any) -> None:
    """``before_flush`` hook: raise if the flush would alter an append-only or final record."""
    for record in session.deleted:
        raise ImmutableRecordError(f"{_describe(record)} cannot be deleted")
    for record in session.dirty:
        if not session.is_modified(record):
            continue
        if not isinstance(record, Run) or _status_before(record) in FINAL_STATUSES:
            raise ImmutableRecordError(f"{_describe(record)} cannot be changed")


def _status_before(run: Run) -> str:
    history = inspect(run).attrs.status.history
    statuses: Sequence[str] = history.deleted or history.unchanged
    return statuses[0]


def _describe(record: Base) -> str:
    key = inspect(record).identity or ()
    return f"{type(record).__tablename__} {'/'.join(map(str, key))}"
