"""The store's state for operations: its schema revision and counts of runs and folds."""

from __future__ import annotations

from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from storage.db.migrate import alembic_config
from storage.db.schema import RUN_STATUSES, Run
from storage.errors import translates_errors


def head_revision() -> str:
    """The latest migration this code ships."""
    head = ScriptDirectory.from_config(alembic_config()).get_current_head()
    assert head is not None
    return head


@translates_errors
def schema_revision(session: Session) -> str | None:
    """The migration the database is at (``None`` for an empty database)."""
    return MigrationContext.configure(session.connection()).get_current_revision()


@translates_errors
def run_counts(session: Session) -> dict[str, int]:
    """How many runs are in each status (every status listed, zeros included)."""
    counts = dict(session.execute(select(Run.status, func.count()).group_by(Run.status))
                  .tuples().all())
    return {status: counts.get(status, 0) for status in RUN_STATUSES}


@translates_errors
def folds_computed(session: Session) -> int:
    """Folds computed over all runs, finished or not."""
    return int(session.execute(select(func.coalesce(func.sum(Run.folds_done), 0))).scalar_one())
