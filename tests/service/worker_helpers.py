"""Real inputs and real processes for the queue and worker tests.

Runs are queued through the storage API on a migrated store; workers are ``python -m
service.cli.main worker`` processes in their own process group (so their pool processes die
with them), configured only through ``FOLDLINE_*`` variables, logging to a file.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager, suppress
from pathlib import Path

from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import Candidate, parse_candidates
from backtest.plan import Plan, parse_plan
from backtest.series import Series
from storage.audit import AuditEntry, entry_of
from storage.db import AuditEvent, make_engine, session_factory, take_write_lock
from storage.runs import queue_run
from storage.series import save_series_version
from tests.storage.builders import monthly_series

REPO = Path(__file__).resolve().parents[2]
ANALYST = "analyst@example.org"
FAST = parse_candidates([{"family": "benchmark", "method": "naive"},
                         {"family": "benchmark", "method": "drift"}])
# About a quarter second of ARIMA fits per series: slow enough to stop a worker mid-run.
SLOW = parse_candidates([{"family": "benchmark", "method": "naive"},
                         {"family": "arima", "order": [1, 1, 1]}])
FAST_PLAN = parse_plan({"horizon": 4, "max_origins": 3, "seed": 11})
SLOW_PLAN = parse_plan({"horizon": 4, "max_origins": 6, "seed": 11})
LEASE_SECONDS = 2.0


def some_series(count: int, prefix: str = "sales") -> list[Series]:
    """``count`` different monthly series."""
    return [monthly_series(f"{prefix}/{i}", seed=i, level=100.0 + 10 * i) for i in range(count)]


@contextmanager
def writing(sessions: sessionmaker[Session]) -> Iterator[Session]:
    """A committed transaction that holds the store's write lock from its start, as the
    service's write transactions do: beside running workers a SQLite transaction that
    reads before it writes is otherwise refused at once if a worker commits in between."""
    with sessions.begin() as session:
        take_write_lock(session)
        yield session


@contextmanager
def sessions_on(url: str) -> Iterator[sessionmaker[Session]]:
    """Sessions on the store at ``url``."""
    engine = make_engine(url)
    try:
        yield session_factory(engine)
    finally:
        engine.dispose()


def queue(sessions: sessionmaker[Session], series: Sequence[Series],
          candidates: Sequence[Candidate] = FAST, plan: Plan = FAST_PLAN) -> int:
    """Save ``series`` and queue a run on them; return its id."""
    with writing(sessions) as session:
        versions = [save_series_version(session, s, actor=ANALYST).version.id for s in series]
        return queue_run(session, series_version_ids=versions, candidates=candidates,
                         plan=plan, actor=ANALYST).id


def events(session: Session, action: str, subject: str | None = None) -> list[AuditEntry]:
    """The audit events of one action (on one subject), oldest first."""
    query = select(AuditEvent).where(AuditEvent.action == action).order_by(AuditEvent.seq)
    if subject is not None:
        query = query.where(AuditEvent.subject == subject)
    return [entry_of(event) for event in session.scalars(query)]


def wait_until(condition: Callable[[], object], what: str, timeout: float = 60.0,
               log: Path | None = None) -> object:
    """Poll ``condition`` until it is truthy; fail naming ``what`` (and the log) if not."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        value = condition()
        if value:
            return value
        time.sleep(0.02)
    tail = log.read_text()[-3000:] if log is not None and log.exists() else ""
    raise AssertionError(f"timed out after {timeout} s waiting for {what}\n{tail}")


class WorkerProcess:
    """A ``foldline worker`` process on the store at ``url``."""

    def __init__(self, url: str, log: Path, **settings: str) -> None:
        env = {k: v for k, v in os.environ.items() if not k.startswith("FOLDLINE_")}
        env.update({"FOLDLINE_DATABASE_URL": url, "FOLDLINE_LEASE_SECONDS": str(LEASE_SECONDS),
                    "FOLDLINE_POLL_SECONDS": "0.1", "FOLDLINE_WORKER_JOBS": "1",
                    "FOLDLINE_PRERENDER_REPORTS": "false"})
        env.update({f"FOLDLINE_{name.upper()}": value for name, value in settings.items()})
        self.log = log
        with log.open("w") as out:
            self.process = subprocess.Popen(
                [sys.executable, "-m", "service.cli.main", "worker"], cwd=REPO, env=env,
                stdout=out, stderr=subprocess.STDOUT, start_new_session=True)

    def wait_ready(self) -> None:
        wait_until(lambda: "ready" in self.log.read_text(), "the worker to start", log=self.log)

    def signal(self, signum: int) -> None:
        """Send ``signum`` to the worker process, as a container engine does."""
        self.process.send_signal(signum)

    def wait(self, timeout: float = 30.0) -> int:
        return self.process.wait(timeout)

    def kill(self) -> None:
        """SIGKILL the worker's whole process group if anything of it is left."""
        with suppress(ProcessLookupError):
            os.killpg(self.process.pid, signal.SIGKILL)
        self.process.wait(10)


@contextmanager
def workers(url: str, directory: Path, count: int = 1,
            **settings: str) -> Iterator[list[WorkerProcess]]:
    """``count`` worker processes, killed on the way out whatever happened."""
    started: list[WorkerProcess] = []
    directory.mkdir(parents=True, exist_ok=True)
    try:
        for number in range(count):
            started.append(WorkerProcess(url, directory / f"worker-{number}.log", **settings))
        yield started
    finally:
        for worker in started:
            worker.kill()
