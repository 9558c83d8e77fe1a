"""The API's audit verification: incremental, one at a time, a running one shared.

Each call continues from the last verified head (:func:`storage.audit.verify.verify_incrementally`)
and, if it passed, keeps the new head for the next call. Within a server process one
verification runs at a time: a call that arrives while one runs waits for it and gets its
report, so concurrent calls cost one pass, not one each. On PostgreSQL an advisory lock
also serialises verifications across processes. The full pass stays with the auditor's
``foldline audit verify``.
"""

from __future__ import annotations

import threading
from concurrent.futures import Future

from sqlalchemy.orm import Session, sessionmaker

from service.usecases.transactions import write
from storage.audit import AuditReport, record_verified, verify_incrementally


class Verifier:
    """Runs verifications of one store, one at a time."""

    def __init__(self, sessions: sessionmaker[Session]) -> None:
        self._sessions = sessions
        self._guard = threading.Lock()
        self._running: Future[AuditReport] | None = None

    def verify(self) -> AuditReport:
        """Verify from the last verified head, or share the verification already running."""
        with self._guard:
            running = self._running
            if running is None:
                mine = self._running = Future()
        if running is not None:
            return running.result()
        try:
            report = self._verify()
        except BaseException as exc:
            mine.set_exception(exc)
            raise
        else:
            mine.set_result(report)
            return report
        finally:
            with self._guard:
                self._running = None

    def _verify(self) -> AuditReport:
        with self._sessions.begin() as session:
            report = verify_incrementally(session)
        if report.ok:
            write(self._sessions, lambda session: record_verified(session, report))
        return report
