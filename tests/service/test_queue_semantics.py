"""The run queue on SQLite and PostgreSQL: claims, leases, hand-backs and cancellation.

Each test has a store of its own: claims commit, and several sessions act as the workers.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy.orm import Session, sessionmaker

from backtest.engine import run_backtest
from backtest.results import SeriesResult
from storage.audit import run_subject, verify_audit_log
from storage.errors import ImmutableRecordError, LeaseLostError
from storage.results import completed_units
from storage.runs import fail_run, get_run
from storage.runs.queue import (
    Claim,
    cancel_requester,
    claim_run,
    hold_lease,
    release_lease,
    request_cancel,
    write_unit,
)
from storage.series import load_series
from tests.service.worker_helpers import FAST, FAST_PLAN, events, queue, sessions_on, some_series
from tests.storage.conftest import BACKENDS, migrated_store

SHORT_LEASE = 0.4


@pytest.fixture(params=BACKENDS)
def sessions(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[sessionmaker[Session]]:
    with migrated_store(request.param, tmp_path) as url, sessions_on(url) as sessions:
        yield sessions


def _claim(sessions: sessionmaker[Session], owner: str,
           lease_seconds: float = 30.0) -> Claim | None:
    with sessions.begin() as session:
        return claim_run(session, owner=owner, lease_seconds=lease_seconds)


def _one_unit(sessions: sessionmaker[Session], run_id: int) -> tuple[int, SeriesResult]:
    with sessions.begin() as session:
        version = get_run(session, run_id).series_version_ids[0]
        series = load_series(session, version)
    return version, run_backtest([series], FAST, FAST_PLAN).series[0]


def test_runs_are_claimed_oldest_first_each_by_one_worker(sessions):
    runs = [queue(sessions, some_series(1, prefix=f"r{i}")) for i in range(3)]

    claims = [_claim(sessions, f"worker-{i}") for i in range(4)]

    assert [c.lease.run_id for c in claims[:3]] == runs
    assert claims[3] is None
    with sessions.begin() as session:
        for number, run_id in enumerate(runs):
            run = get_run(session, run_id)
            assert (run.status, run.attempts) == ("running", 1)
            [started] = events(session, "run.started", run_subject(run_id))
            assert started.actor == f"worker-{number}"


def test_concurrent_claims_never_take_the_same_run(sessions):
    runs = [queue(sessions, some_series(1, prefix=f"r{i}")) for i in range(8)]
    taken: dict[str, list[int]] = {f"worker-{i}": [] for i in range(4)}

    def claim_all(owner: str) -> None:
        while (claim := _claim(sessions, owner)) is not None:
            taken[owner].append(claim.lease.run_id)

    threads = [threading.Thread(target=claim_all, args=(owner,)) for owner in taken]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(60)

    claimed = [run_id for ids in taken.values() for run_id in ids]
    assert sorted(claimed) == runs
    with sessions.begin() as session:
        assert all(len(events(session, "run.started", run_subject(r))) == 1 for r in runs)


def test_expired_lease_is_claimed_again_and_the_old_holder_cannot_write(sessions):
    run_id = queue(sessions, some_series(1))
    first = _claim(sessions, "worker-a", SHORT_LEASE)
    assert _claim(sessions, "worker-b") is None
    time.sleep(SHORT_LEASE + 0.1)

    second = _claim(sessions, "worker-b")
    version, unit = _one_unit(sessions, run_id)

    assert (second.lease.run_id, second.attempts, second.resumed) == (run_id, 2, True)
    with pytest.raises(LeaseLostError, match="worker-a"), sessions.begin() as session:
        write_unit(session, first.lease, version, unit, folds_done=1)
    with sessions.begin() as session:
        assert completed_units(session, run_id) == []
        write_unit(session, second.lease, version, unit, folds_done=1)
    with sessions.begin() as session:
        assert completed_units(session, run_id) == [version]
        [reclaimed] = events(session, "run.reclaimed", run_subject(run_id))
        assert reclaimed.actor == "worker-b"
        [written] = events(session, "results.written")
        assert written.actor == "worker-b"
        assert verify_audit_log(session).ok


def test_workers_storing_first_units_at_the_same_time_both_succeed(sessions):
    # Both units bring the benchmark candidate the engine adds, which is not stored yet.
    runs = [queue(sessions, some_series(1, prefix=f"r{i}")) for i in range(2)]
    leases = [_claim(sessions, f"worker-{i}").lease for i in range(2)]
    units = [_one_unit(sessions, run_id) for run_id in runs]
    errors: list[Exception] = []

    def second_worker_writes() -> None:
        try:
            with sessions.begin() as session:
                write_unit(session, leases[1], *units[1], folds_done=1)
        except Exception as exc:
            errors.append(exc)

    first = sessions()
    with first.begin():
        write_unit(first, leases[0], *units[0], folds_done=1)
        second = threading.Thread(target=second_worker_writes)
        second.start()
        time.sleep(0.3)
    second.join(30)
    first.close()

    assert errors == []
    with sessions.begin() as session:
        assert [completed_units(session, r) for r in runs] == [[u[0]] for u in units]


def test_a_worker_that_lost_its_lease_cannot_end_the_run(sessions):
    run_id = queue(sessions, some_series(1))
    first = _claim(sessions, "worker-a", SHORT_LEASE)
    time.sleep(SHORT_LEASE + 0.1)
    _claim(sessions, "worker-b")

    with pytest.raises(LeaseLostError), sessions.begin() as session:
        hold_lease(session, first.lease)
        fail_run(session, run_id, actor="worker-a", reason="never written")
    with sessions.begin() as session:
        assert not release_lease(session, first.lease)
        run = get_run(session, run_id)
    assert (run.status, run.failure_reason) == ("running", None)


def test_a_released_run_is_claimable_at_once(sessions):
    run_id = queue(sessions, some_series(1))
    first = _claim(sessions, "worker-a")

    with sessions.begin() as session:
        assert release_lease(session, first.lease)
    second = _claim(sessions, "worker-b")

    assert (second.lease.run_id, second.resumed) == (run_id, True)
    with sessions.begin() as session:
        [released] = events(session, "run.released", run_subject(run_id))
        assert released.actor == "worker-a"


def test_cancelling_a_queued_run_ends_it_at_once(sessions):
    run_id = queue(sessions, some_series(1))

    with sessions.begin() as session:
        run = request_cancel(session, run_id, actor="alice")

    assert (run.status, run.failure_reason) == ("cancelled", "cancelled by alice")
    assert _claim(sessions, "worker-a") is None
    with sessions.begin() as session:
        [finished] = events(session, "run.finished", run_subject(run_id))
        assert finished.actor == "alice"
        with pytest.raises(ImmutableRecordError, match="finished"):
            request_cancel(session, run_id, actor="alice")


def test_cancelling_a_running_run_is_recorded_for_its_worker(sessions):
    run_id = queue(sessions, some_series(1))
    _claim(sessions, "worker-a")

    for _ in range(2):
        with sessions.begin() as session:
            run = request_cancel(session, run_id, actor="alice")

    assert run.status == "running"
    with sessions.begin() as session:
        assert cancel_requester(session, run_id) == "alice"
        [requested] = events(session, "run.cancel_requested", run_subject(run_id))
        assert requested.actor == "alice"


def test_cancelling_a_run_whose_lease_lapsed_ends_it_at_once(sessions):
    run_id = queue(sessions, some_series(1))
    first = _claim(sessions, "worker-a", SHORT_LEASE)
    time.sleep(SHORT_LEASE + 0.1)

    with sessions.begin() as session:
        run = request_cancel(session, run_id, actor="alice")

    assert run.status == "cancelled"
    with pytest.raises(LeaseLostError), sessions.begin() as session:
        hold_lease(session, first.lease)
