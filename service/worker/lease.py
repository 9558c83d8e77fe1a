"""Keeping a claimed run's lease alive while its units are computed.

A unit (one series) can take longer than the lease, and the engine reports progress only
when a task finishes, so a background thread renews the lease every third of its length,
storing the latest progress with each renewal. If a renewal finds the lease gone, ``lost``
is set and the job stops at its next task.
"""

from __future__ import annotations

import logging
import threading
from types import TracebackType

from sqlalchemy.orm import Session, sessionmaker

from storage.errors import LeaseLostError, StorageError
from storage.runs import Lease, hold_lease

log = logging.getLogger("foldline.worker")


class LeaseKeeper:
    """Renews ``lease`` in a background thread while the ``with`` block runs."""

    def __init__(self, sessions: sessionmaker[Session], lease: Lease) -> None:
        self.lost = threading.Event()
        self.folds_done: int | None = None
        self._sessions, self._lease = sessions, lease
        self._done = threading.Event()
        self._thread = threading.Thread(target=self._renew_until_done, daemon=True,
                                        name=f"lease-of-run-{lease.run_id}")

    def __enter__(self) -> LeaseKeeper:
        self._thread.start()
        return self

    def __exit__(self, kind: type[BaseException] | None, exc: BaseException | None,
                 traceback: TracebackType | None) -> None:
        self._done.set()
        self._thread.join()

    def _renew_until_done(self) -> None:
        while not self._done.wait(self._lease.seconds / 3):
            try:
                with self._sessions.begin() as session:
                    hold_lease(session, self._lease, folds_done=self.folds_done)
            except LeaseLostError:
                self.lost.set()
                return
            except StorageError as exc:
                # The store may be back before the lease runs out; the next renewal retries.
                log.warning("renewing the lease of run %s failed: %s", self._lease.run_id, exc)
