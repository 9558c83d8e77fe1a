"""``foldline worker`` as a real process: computing runs, honouring a cancel, stopping."""

from __future__ import annotations

import signal
from pathlib import Path

from backtest.engine import run_backtest
from storage.audit import run_subject, verify_audit_log
from storage.results import completed_units, load_run_result
from storage.runs import claim_run, get_run, request_cancel
from tests.service.worker_helpers import (
    FAST,
    FAST_PLAN,
    SLOW,
    SLOW_PLAN,
    events,
    queue,
    sessions_on,
    some_series,
    wait_until,
    workers,
    writing,
)
from tests.storage.conftest import migrated_store


def _status(sessions, run_id: int) -> str:
    with sessions.begin() as session:
        return get_run(session, run_id).status


def _done(sessions, run_id: int) -> list[int]:
    with sessions.begin() as session:
        return completed_units(session, run_id)


def test_idle_worker_computes_a_run_queued_later_and_stops_on_sigterm(tmp_path: Path):
    series = some_series(3)
    with migrated_store("sqlite", tmp_path) as url, sessions_on(url) as sessions, \
            workers(url, tmp_path) as [worker]:
        worker.wait_ready()
        run_id = queue(sessions, series)
        direct = run_backtest(series, FAST, FAST_PLAN)
        wait_until(lambda: _status(sessions, run_id) == "succeeded", "the run to succeed",
                   log=worker.log)
        worker.signal(signal.SIGTERM)

        assert worker.wait() == 0
        assert "stopped" in worker.log.read_text()
        with sessions.begin() as session:
            assert load_run_result(session, run_id).series == direct.series
            assert verify_audit_log(session).ok


def test_a_cancel_is_honoured_between_units_and_sigterm_hands_the_next_run_back(
        tmp_path: Path):
    with migrated_store("sqlite", tmp_path) as url, sessions_on(url) as sessions, \
            workers(url, tmp_path) as [worker]:
        cancelled = queue(sessions, some_series(4), SLOW, SLOW_PLAN)
        wait_until(lambda: _done(sessions, cancelled), "a first unit", log=worker.log)
        with writing(sessions) as session:
            request_cancel(session, cancelled, actor="alice")
        wait_until(lambda: _status(sessions, cancelled) == "cancelled", "the cancel",
                   log=worker.log)
        handed_back = queue(sessions, some_series(4, prefix="later"), SLOW, SLOW_PLAN)
        wait_until(lambda: _done(sessions, handed_back), "a first unit of the next run",
                   log=worker.log)
        worker.signal(signal.SIGTERM)

        assert worker.wait() == 0
        with writing(sessions) as session:
            run = get_run(session, cancelled)
            [started] = events(session, "run.started", run_subject(cancelled))
            [finished] = events(session, "run.finished", run_subject(cancelled))
            assert get_run(session, handed_back).status == "running"
            [released] = events(session, "run.released", run_subject(handed_back))
            claim = claim_run(session, owner="worker-next", lease_seconds=30)
        assert run.failure_reason == "cancelled at the request of alice"
        assert 1 <= len(_done(sessions, cancelled)) < 4
        assert finished.actor == started.actor == released.actor
        assert len(_done(sessions, handed_back)) < 4
        assert (claim.lease.run_id, claim.resumed) == (handed_back, True)
