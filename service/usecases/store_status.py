"""The store's state for operations: whether it is ready for this code, and its counts."""

from __future__ import annotations

from sqlalchemy.orm import Session, sessionmaker

from service.errors import NotReadyError
from storage.db import folds_computed, head_revision, run_counts, schema_revision
from storage.errors import StorageError


def ready_revision(sessions: sessionmaker[Session]) -> str:
    """The schema revision, if the store answers and is migrated to this code's schema;
    :class:`NotReadyError` otherwise."""
    try:
        with sessions.begin() as session:
            revision = schema_revision(session)
    except StorageError as exc:
        raise NotReadyError("the database cannot be reached") from exc
    head = head_revision()
    if revision != head:
        raise NotReadyError(f"the database schema is at revision {revision or 'none'}, this "
                            f"server needs {head}: run 'foldline db upgrade'")
    return head


def work_counts(sessions: sessionmaker[Session]) -> tuple[dict[str, int], int]:
    """Runs by status, and the folds computed so far."""
    with sessions.begin() as session:
        return run_counts(session), folds_computed(session)
