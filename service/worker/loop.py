"""The job worker: claims queued runs from the store and computes them, one at a time.

``foldline worker`` runs one as its own process (see :mod:`service.cli.worker`);
``foldline serve`` runs one in a thread beside the API with :func:`start_embedded`. Any
number of workers may share a store: each run is claimed by one worker at a time under a
lease (see :mod:`storage.runs.queue`), in a fair order across the keys that submitted
them. Inside a run the engine's process pool (``worker_jobs``
processes, or the dask cluster at ``dask_scheduler``) does the computation.
"""

from __future__ import annotations

import logging
import os
import secrets
import socket
import threading

from sqlalchemy import Engine
from sqlalchemy.orm import Session, sessionmaker

from backtest.warm_up import warm_up
from service.settings import Settings
from service.usecases.score_outcomes import score_due_outcomes
from service.views.report.prerender import prerender_report
from service.worker.job import RunJob
from storage.db import make_engine
from storage.db import session_factory as sessions_for
from storage.errors import StorageError
from storage.runs import any_claimable, claim_run

log = logging.getLogger("foldline.worker")


def new_worker_id() -> str:
    """A name no other worker has: ``host:pid:random``."""
    return f"{socket.gethostname()}:{os.getpid()}:{secrets.token_hex(4)}"


class Worker:
    """Claims runs from the store named by ``settings`` (or ``session_factory``'s)."""

    def __init__(self, settings: Settings,
                 session_factory: sessionmaker[Session] | None = None,
                 worker_id: str | None = None) -> None:
        self.settings = settings
        self.id = worker_id or new_worker_id()
        self._engine: Engine | None = None
        if session_factory is None:
            self._engine = make_engine(settings.database_url)
            session_factory = sessions_for(self._engine, settings.audit_key)
        self._sessions = session_factory

    def run_once(self, stop: threading.Event | None = None) -> bool:
        """Claim one run and work on it until it ends; ``False`` if none was waiting.

        When ``stop`` is set the run is handed back at the next task instead.
        """
        with self._sessions.begin() as session:
            if not any_claimable(session):
                return False
        with self._sessions.begin() as session:
            claim = claim_run(session, owner=self.id, lease_seconds=self.settings.lease_seconds,
                              max_running=self.settings.key_max_running_runs)
        if claim is None:
            return False
        run_id = claim.lease.run_id
        log.info("%s claimed run %s (attempt %s%s)", self.id, run_id, claim.attempts,
                 ", resuming" if claim.resumed else "")
        ending = RunJob(self._sessions, claim.lease, self.settings,
                        stop or threading.Event()).run()
        log.info("run %s: %s", run_id, ending)
        if ending == "succeeded":
            prerender_report(self._sessions, run_id, self.settings)
        return True

    def run_forever(self, stop: threading.Event) -> None:
        """Work on runs until ``stop`` is set, looking for new ones every ``poll_seconds``;
        before each look, score the outcomes new actuals made due. The compiled ARIMA and
        ETS likelihoods are loaded (or compiled) meanwhile in a background thread, so the
        first run does not wait for them when it arrives later."""
        threading.Thread(target=self._warm_up, name="warm-up", daemon=True).start()
        log.info("worker %s ready", self.id)
        while not stop.is_set():
            try:
                scored = score_due_outcomes(self._sessions, actor=self.id)
                busy = self.run_once(stop) or scored > 0
            except StorageError as exc:
                log.warning("looking for runs failed: %s", exc)
                busy = False
            except Exception:
                log.exception("worker %s: unexpected error; carrying on", self.id)
                busy = False
            if not busy:
                stop.wait(self.settings.poll_seconds)
        log.info("worker %s stopped", self.id)

    def _warm_up(self) -> None:
        seconds = warm_up()
        log.info("worker %s: compiled estimators ready in %.2f s", self.id, seconds)

    def close(self) -> None:
        """Release the database connections this worker opened."""
        if self._engine is not None:
            self._engine.dispose()


def start_embedded(settings: Settings) -> tuple[threading.Thread, threading.Event]:
    """Run a worker in a daemon thread; set the event and join the thread to stop it.

    Stopping hands the current run back at its next task, so another worker (or this
    one, after a restart) resumes it without waiting for the lease to run out.
    """
    stop = threading.Event()
    worker = Worker(settings)

    def work() -> None:
        try:
            worker.run_forever(stop)
        finally:
            worker.close()

    thread = threading.Thread(target=work, name="foldline-worker", daemon=True)
    thread.start()
    return thread, stop
