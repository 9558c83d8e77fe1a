"""Write transactions that wait their turn on a busy store.

Each write transaction first takes the store's write lock (:func:`take_write_lock`; on
SQLite, where one connection writes at a time, it waits up to the busy timeout for a
worker's write to finish). A store still busy after that, or unreachable, is reported as
:class:`StoreUnavailableError`; nothing of the refused transaction is kept, so it is run
again from the start a few times before the client gets 503.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import TypeVar

from sqlalchemy.orm import Session, sessionmaker

from storage.db import take_write_lock
from storage.errors import StoreUnavailableError

T = TypeVar("T")
ATTEMPTS = 3
FIRST_PAUSE_SECONDS = 0.05


def write(sessions: sessionmaker[Session], work: Callable[[Session], T]) -> T:
    """``work(session)`` in one committed transaction that holds the write lock throughout."""
    for attempt in range(ATTEMPTS - 1):
        try:
            return _once(sessions, work)
        except StoreUnavailableError:
            time.sleep(FIRST_PAUSE_SECONDS * 2**attempt)
    return _once(sessions, work)


def _once(sessions: sessionmaker[Session], work: Callable[[Session], T]) -> T:
    with sessions.begin() as session:
        take_write_lock(session)
        return work(session)
