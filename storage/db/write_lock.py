"""Taking SQLite's write lock at the start of a transaction that will write.

SQLite lets one connection write at a time. A transaction that reads first and writes
later is refused at once ("database is locked", without waiting for the busy timeout) if
another connection committed in between, because its snapshot is stale. Taking the write
lock first, with a write statement that changes nothing, makes it wait its turn instead
(up to the busy timeout) and then read current data. PostgreSQL locks rows, not the
database, so there this does nothing.
"""

from __future__ import annotations

from sqlalchemy import false, update
from sqlalchemy.orm import Session

from storage.db.schema import Run
from storage.errors import translates_errors


@translates_errors
def take_write_lock(session: Session) -> None:
    """On SQLite, hold the database's write lock from now until the transaction ends."""
    if session.get_bind().dialect.name == "sqlite":
        session.execute(update(Run).where(false()).values(id=Run.id)
                        .execution_options(synchronize_session=False))
