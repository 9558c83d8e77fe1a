"""Fair claims across keys, and cancels that act within seconds, on SQLite and PostgreSQL.

The first tests claim through the storage functions, as workers do; the last ones run real
``foldline worker`` processes: one key floods the queue and another key's run is still
computed before the flood is through; a long run of one series stops within seconds of a
cancel, not when its series is done.
"""

from __future__ import annotations

import time
from collections.abc import Iterator, Sequence
from pathlib import Path

import pytest
from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import Candidate, parse_candidates
from backtest.plan import Plan, parse_plan
from backtest.series import Series
from storage.db import Run, SeriesResultRecord
from storage.runs import fail_run, get_run, queue_run
from storage.runs.queue import Claim, claim_run, request_cancel
from storage.series import save_series_version
from tests.service.worker_helpers import (
    FAST,
    FAST_PLAN,
    SLOW,
    SLOW_PLAN,
    WorkerProcess,
    events,
    sessions_on,
    some_series,
    wait_until,
    workers,
    writing,
)
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS, migrated_store

FLOOD, OTHER = "flood-key", "other-key"
# One long series and nine ARIMA candidates, re-estimated at every origin by the reference
# (statsmodels) estimator: one task (a candidate on the series) takes a few seconds, the
# whole series half a minute or more. Under the fast estimator the tasks would all be done
# before a cancel could reach them, and a finished pool is kept for the next run.
LONG = parse_candidates([{"family": "arima", "order": [p, 1, q]}
                         for p in range(3) for q in range(3)])
LONG_PLAN = parse_plan({"horizon": 4, "max_origins": 12, "refit": 1, "seed": 5,
                        "estimator": "reference"})


@pytest.fixture(params=BACKENDS)
def store(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    with migrated_store(request.param, tmp_path) as url:
        yield url


@pytest.fixture
def sessions(store: str) -> Iterator[sessionmaker[Session]]:
    with sessions_on(store) as sessions:
        yield sessions


def _queue_as(sessions: sessionmaker[Session], requester: str, series: Sequence[Series],
              candidates: Sequence[Candidate] = FAST, plan: Plan = FAST_PLAN) -> int:
    with writing(sessions) as session:
        versions = [save_series_version(session, s, actor=requester).version.id
                    for s in series]
        return queue_run(session, series_version_ids=versions, candidates=candidates,
                         plan=plan, actor=requester).id


def _claim(sessions: sessionmaker[Session], owner: str,
           max_running: int | None = None) -> Claim | None:
    with writing(sessions) as session:
        return claim_run(session, owner=owner, lease_seconds=30.0, max_running=max_running)


def test_the_next_run_comes_from_the_key_with_the_fewest_running(sessions):
    flood = [_queue_as(sessions, FLOOD, some_series(1, prefix=f"f{i}")) for i in range(4)]
    other = _queue_as(sessions, OTHER, some_series(1, prefix="o"))

    claimed = [_claim(sessions, f"worker-{i}").lease.run_id for i in range(5)]

    # first-in-first-out would give flood[0..3] before the other key's run
    assert claimed == [flood[0], other, flood[1], flood[2], flood[3]]


def test_among_keys_running_as_many_the_oldest_waiting_run_goes_first(sessions):
    flood = [_queue_as(sessions, FLOOD, some_series(1, prefix=f"f{i}")) for i in range(3)]
    other = [_queue_as(sessions, OTHER, some_series(1, prefix=f"o{i}")) for i in range(2)]

    claimed = [_claim(sessions, f"worker-{i}").lease.run_id for i in range(5)]

    # after one run each, both keys run as many: the older waiting run (flood's) goes next
    assert claimed == [flood[0], other[0], flood[1], other[1], flood[2]]


def test_a_key_running_its_limit_waits_and_resumes_when_one_ends(sessions):
    flood = [_queue_as(sessions, FLOOD, some_series(1, prefix=f"f{i}")) for i in range(3)]

    assert [_claim(sessions, "w", max_running=2).lease.run_id for _ in range(2)] == flood[:2]
    assert _claim(sessions, "w", max_running=2) is None
    with writing(sessions) as session:
        fail_run(session, flood[0], actor="w", reason="done for the test")

    assert _claim(sessions, "w", max_running=2).lease.run_id == flood[2]


def test_after_a_run_the_key_served_least_recently_goes_first(sessions):
    flood = [_queue_as(sessions, FLOOD, some_series(1, prefix=f"f{i}")) for i in range(3)]
    other = _queue_as(sessions, OTHER, some_series(1, prefix="o"))

    order = []
    for _ in range(4):  # one worker: each run ends before the next claim
        claim = _claim(sessions, "w")
        order.append(claim.lease.run_id)
        with writing(sessions) as session:
            fail_run(session, claim.lease.run_id, actor="w", reason="done for the test")

    # no key has a run running at any claim; the other key, never served, goes second
    assert order == [flood[0], other, flood[1], flood[2]]


def test_one_key_s_flood_does_not_hold_back_another_key_s_run(store, sessions,
                                                              tmp_path: Path):
    flood = [_queue_as(sessions, FLOOD, some_series(4, prefix=f"flood{i}"), SLOW, SLOW_PLAN)
             for i in range(6)]
    with workers(store, tmp_path / "logs", count=1) as [worker]:
        _wait_ready(worker)
        wait_until(lambda: _status(sessions, flood[0]) != "queued", "the flood to start",
                   timeout=300, log=worker.log)
        other = _queue_as(sessions, OTHER, some_series(1, prefix="other"), SLOW, SLOW_PLAN)
        with sessions.begin() as session:
            started_before = len(events(session, "run.started"))
        wait_until(lambda: _status(sessions, other) == "succeeded", "the other key's run",
                   timeout=600, log=worker.log)
        with sessions.begin() as session:
            order = [int(e.subject.split("/")[1]) for e in events(session, "run.started")]
            still_waiting = [r for r in flood if get_run(session, r).status == "queued"]
    print(f"\nclaim order (flood {flood}, other {other}): {order}; flood runs started when "
          f"the other was queued: {started_before}; still queued when it finished: "
          f"{len(still_waiting)}")
    # first-in-first-out would claim it seventh, after the whole flood
    assert order.index(other) <= started_before + 1 < len(flood)
    assert len(still_waiting) >= 2


def test_a_cancel_stops_a_long_single_series_run_within_seconds(store, sessions,
                                                                tmp_path: Path):
    run_id = _queue_as(sessions, FLOOD, [monthly_series("long/one", 240, seed=3, level=200.0)],
                       LONG, LONG_PLAN)
    with workers(store, tmp_path / "logs", count=1, worker_jobs="2",
                 cancel_poll_seconds="0.5") as [worker]:
        _wait_ready(worker)
        wait_until(lambda: _folds_done(sessions, run_id) > 0, "a first task to finish",
                   timeout=400, log=worker.log)
        pool = _pool_processes(worker.process.pid)
        with writing(sessions) as session:
            request_cancel(session, run_id, actor=OTHER)
        asked = time.monotonic()
        wait_until(lambda: _status(sessions, run_id) == "cancelled", "the cancel to act",
                   timeout=120, log=worker.log)
        latency = time.monotonic() - asked
        with sessions.begin() as session:
            run = get_run(session, run_id)
            stored = session.scalars(select(SeriesResultRecord.run_id)
                                     .where(SeriesResultRecord.run_id == run_id)).all()
        assert run.folds_done < run.folds_total and stored == [], "the run ended before the cancel"
        # the pool's tasks were ended with the run: its processes are gone
        wait_until(lambda: not any(_alive(pid) for pid in pool), "the pool to end",
                   timeout=10, log=worker.log)
    print(f"\ncancel latency {latency:.2f} s at {run.folds_done} of {run.folds_total} folds")
    assert len(pool) == 2
    assert run.failure_reason == f"cancelled at the request of {OTHER}"
    assert latency < 10.0


def _pool_processes(parent: int) -> set[int]:
    """The loky pool processes among ``parent``'s children."""
    found = set()
    for entry in (e for e in Path("/proc").iterdir() if e.name.isdigit()):
        try:
            stat = (entry / "stat").read_text()
            command = (entry / "cmdline").read_bytes()
        except OSError:
            continue
        if int(stat.rsplit(")", 1)[1].split()[1]) == parent and b"popen_loky" in command:
            found.add(int(entry.name))
    return found


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")


def _wait_ready(worker: WorkerProcess) -> None:
    # generous: on a machine shared by many processes a worker's imports can take minutes
    wait_until(lambda: "ready" in worker.log.read_text(), "the worker to start", timeout=300,
               log=worker.log)


def _status(sessions: sessionmaker[Session], run_id: int) -> str:
    with sessions.begin() as session:
        return session.scalar(select(Run.status).where(Run.id == run_id))


def _folds_done(sessions: sessionmaker[Session], run_id: int) -> int:
    with sessions.begin() as session:
        return session.scalar(select(Run.folds_done).where(Run.id == run_id)) or 0
