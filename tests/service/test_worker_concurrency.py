"""Two worker processes on one PostgreSQL store share the queue without overlap."""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import pytest

from storage.audit import run_subject, unit_subject, verify_audit_log
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
from tests.storage.conftest import migrated_store

RUNS = 4


@pytest.mark.postgres
def test_two_workers_never_process_the_same_unit_and_finish_every_run(tmp_path: Path):
    with migrated_store("postgresql", tmp_path) as url, sessions_on(url) as sessions, \
            workers(url, tmp_path, count=2) as pair:
        for worker in pair:
            worker.wait_ready()
        runs = [queue(sessions, some_series(2, prefix=f"run{i}"), SLOW, SLOW_PLAN)
                for i in range(RUNS)]

        def statuses() -> list[str]:
            with sessions.begin() as session:
                return [get_run(session, run_id).status for run_id in runs]

        wait_until(lambda: statuses() == ["succeeded"] * RUNS, "every run to succeed",
                   log=pair[0].log)

        with sessions.begin() as session:
            infos = [get_run(session, run_id) for run_id in runs]
            claims = [events(session, "run.started", run_subject(r)) for r in runs]
            reclaims = [events(session, "run.reclaimed", run_subject(r)) for r in runs]
            written = events(session, "results.written")
            assert verify_audit_log(session).ok
    units = [unit_subject(run.id, v) for run in infos for v in run.series_version_ids]
    assert Counter(e.subject for e in written) == Counter(units)
    assert [len(c) for c in claims] == [1] * RUNS and reclaims == [[]] * RUNS
    owner = {run_subject(r): c[0].actor for r, c in zip(runs, claims)}
    assert all(e.actor == owner[e.subject.replace("series_result", "run").rsplit("/", 1)[0]]
               for e in written)
    assert len(set(owner.values())) == 2
