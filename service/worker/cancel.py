"""Noticing, while a run computes, that someone asked for it to be cancelled.

A background thread looks for the run's cancel request (``run.cancel_requested``) every
``cancel_poll_seconds``; the job checks :attr:`CancelWatch.requested` after each task (one
candidate on one series), so a cancel takes effect within seconds even inside a long series,
and the pool's other tasks are stopped with it.
"""

from __future__ import annotations

import logging
import threading
from types import TracebackType

from sqlalchemy.orm import Session, sessionmaker

from storage.errors import StorageError
from storage.runs import cancel_requester

log = logging.getLogger("foldline.worker")


class CancelWatch:
    """Looks for a cancel request of run ``run_id`` while the ``with`` block runs."""

    def __init__(self, sessions: sessionmaker[Session], run_id: int, seconds: float) -> None:
        self.requested = threading.Event()
        self.requester: str | None = None
        self._sessions, self._run_id, self._seconds = sessions, run_id, seconds
        self._done = threading.Event()
        self._thread = threading.Thread(target=self._watch, daemon=True,
                                        name=f"cancel-watch-of-run-{run_id}")

    def __enter__(self) -> CancelWatch:
        self._thread.start()
        return self

    def __exit__(self, kind: type[BaseException] | None, exc: BaseException | None,
                 traceback: TracebackType | None) -> None:
        self._done.set()
        self._thread.join()

    def _watch(self) -> None:
        while not self._done.wait(self._seconds):
            try:
                with self._sessions.begin() as session:
                    requester = cancel_requester(session, self._run_id)
            except StorageError as exc:
                log.warning("looking for a cancel of run %s failed: %s", self._run_id, exc)
                continue
            if requester is not None:
                self.requester = requester
                self.requested.set()
                return
