"""A worker killed with SIGKILL mid-run: another worker resumes it once the lease runs out,
and the stored results equal an uninterrupted run's, with no unit written twice."""

from __future__ import annotations

import signal
from collections import Counter
from pathlib import Path

import pytest

from backtest.engine import run_backtest
from storage.audit import run_subject, unit_subject, verify_audit_log
from storage.results import completed_units, load_run_result
from storage.runs import get_run
from tests.service.worker_helpers import (
    SLOW,
    SLOW_PLAN,
    events,
    queue,
    sessions_on,
    some_series,
    wait_until,
    workers,
)
from tests.storage.conftest import BACKENDS, migrated_store

UNITS = 5


@pytest.mark.parametrize("backend", BACKENDS)
def test_killed_worker_run_is_finished_by_another_with_identical_results(backend,
                                                                         tmp_path: Path):
    series = some_series(UNITS)
    with migrated_store(backend, tmp_path) as url, sessions_on(url) as sessions, \
            workers(url, tmp_path, count=2) as pair:
        for worker in pair:
            worker.wait_ready()
        run_id = queue(sessions, series, SLOW, SLOW_PLAN)

        def done() -> list[int]:
            with sessions.begin() as session:
                return completed_units(session, run_id)

        def status() -> str:
            with sessions.begin() as session:
                return get_run(session, run_id).status

        wait_until(done, "a first unit", log=pair[0].log)
        with sessions.begin() as session:
            [started] = events(session, "run.started", run_subject(run_id))
        holder, other = sorted(pair, key=lambda w: f":{w.process.pid}:" not in started.actor)
        holder.signal(signal.SIGKILL)
        holder.wait()
        before_kill = done()
        uninterrupted = run_backtest(series, SLOW, SLOW_PLAN)
        wait_until(lambda: status() == "succeeded", "the other worker to finish the run",
                   log=other.log)

        with sessions.begin() as session:
            run = get_run(session, run_id)
            stored = load_run_result(session, run_id)
            [reclaimed] = events(session, "run.reclaimed", run_subject(run_id))
            written = events(session, "results.written")
            assert verify_audit_log(session).ok
    assert f":{holder.process.pid}:" in started.actor
    assert f":{other.process.pid}:" in reclaimed.actor
    assert 1 <= len(before_kill) < UNITS
    assert stored.series == uninterrupted.series
    assert (run.attempts, run.folds_done) == (2, run.folds_total)
    assert Counter(e.subject for e in written) == Counter(
        unit_subject(run_id, v) for v in run.series_version_ids)
    writers = {e.subject: e.actor for e in written}
    assert all(writers[unit_subject(run_id, v)] == (started.actor if v in before_kill
                                                    else reclaimed.actor)
               for v in run.series_version_ids)
