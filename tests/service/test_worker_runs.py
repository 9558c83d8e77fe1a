"""A worker in this process on a real store: results, failures, and stored specs."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series
from service.settings import Settings
from service.views.report.cache import ReportCache, report_key
from service.views.report.prerender import prerender_report
from service.views.report.stored import stored_run_report
from service.worker.loop import Worker
from service.worker.queued_specs import StoredSpecError, stored_candidates, stored_plan
from storage.audit import run_subject, verify_audit_log
from storage.results import load_run_result
from storage.runs import get_run
from tests.service.worker_helpers import FAST, FAST_PLAN, events, queue, sessions_on, some_series
from tests.storage.conftest import BACKENDS, migrated_store


@pytest.fixture(params=BACKENDS)
def store(request: pytest.FixtureRequest,
          tmp_path: Path) -> Iterator[tuple[str, sessionmaker[Session]]]:
    with migrated_store(request.param, tmp_path) as url, sessions_on(url) as sessions:
        yield url, sessions


def _worker(url: str, sessions: sessionmaker[Session]) -> Worker:
    settings = Settings(database_url=url, worker_jobs=1, lease_seconds=30, poll_seconds=0.1)
    return Worker(settings, sessions, worker_id="worker-here")


def test_worker_stores_what_the_engine_computes(store):
    url, sessions = store
    series = some_series(3)
    run_id = queue(sessions, series)

    assert _worker(url, sessions).run_once()

    with sessions.begin() as session:
        run = get_run(session, run_id)
        stored = load_run_result(session, run_id)
        assert verify_audit_log(session).ok
    direct = run_backtest(series, FAST, FAST_PLAN)
    assert stored.series == direct.series
    assert (run.status, run.folds_done, run.folds_total) == ("succeeded", 27, 27)
    assert run.software == direct.software


def test_failed_run_keeps_its_reason_and_the_worker_carries_on(store):
    url, sessions = store
    below_zero = make_series("margin/returns", "P1M",
                             [(f"2020-{m:02d}", v) for m, v in
                              zip(range(1, 13), [3, -1, 4, 1, -5, 9, 2, 6, -5, 3, 5, 8])])
    needs_positive = parse_candidates([{"family": "arima", "order": [0, 1, 1],
                                        "transform": "log"}])
    doomed = queue(sessions, [below_zero], needs_positive, parse_plan({"horizon": 2}))
    fine = queue(sessions, some_series(1))
    worker = _worker(url, sessions)

    outcomes = [worker.run_once() for _ in range(3)]

    assert outcomes == [True, True, False]
    with sessions.begin() as session:
        failed = get_run(session, doomed)
        assert failed.status == "failed"
        assert failed.failure_reason.startswith("CandidateError: ")
        assert "positive" in failed.failure_reason and "\n" not in failed.failure_reason
        assert get_run(session, fine).status == "succeeded"
        [finished] = events(session, "run.finished", run_subject(doomed))
        assert finished.actor == "worker-here"


@pytest.mark.parametrize("body", [{"horizon": 3}, {"horizon": 3, "max_origins": 4},
                                  {"horizon": 2, "first_origin": {"period": "2020-06"},
                                   "window": {"kind": "sliding", "length": 12}}])
def test_a_stored_plan_is_the_plan_that_was_queued(body):
    plan = parse_plan(body)

    assert stored_plan(plan.canonical()) == plan


def test_a_candidate_spec_that_parses_to_another_id_is_refused():
    naive, drift = parse_candidates([{"family": "benchmark", "method": "naive"},
                                     {"family": "benchmark", "method": "drift"}])

    assert stored_candidates([naive.canonical], [naive.id]) == (naive,)
    with pytest.raises(StoredSpecError, match=naive.id):
        stored_candidates([drift.canonical], [naive.id])


def _reporting(url: str, reports: Path, *, ahead: bool) -> Settings:
    """Settings of a worker with a report cache in ``reports``."""
    return Settings(database_url=url, worker_jobs=1, lease_seconds=30,
                    report_cache_dir=str(reports), prerender_reports=ahead)


def test_a_succeeded_run_s_report_is_rendered_ahead_into_the_cache(store, tmp_path: Path):
    url, sessions = store
    run_id = queue(sessions, some_series(2))

    assert Worker(_reporting(url, tmp_path / "reports", ahead=True), sessions).run_once()

    with sessions.begin() as session:
        key = report_key(get_run(session, run_id))
    cache = ReportCache(tmp_path / "reports")
    filed = cache.get(key)
    assert filed is not None and f"run {run_id}" in filed.lower()
    # A reader is served that file, not a new rendering (marked here to tell them apart).
    cache.path(key).write_text(filed + "<!-- filed ahead -->", encoding="utf-8")
    served = stored_run_report(sessions, run_id, cache)
    assert served.endswith("<!-- filed ahead -->")


def test_without_rendering_ahead_or_success_the_report_waits_for_its_first_reader(
        store, tmp_path: Path):
    url, sessions = store
    finished = queue(sessions, some_series(2))
    assert Worker(_reporting(url, tmp_path / "reports", ahead=False), sessions).run_once()
    waiting = queue(sessions, some_series(2, prefix="later"))

    with sessions.begin() as session:
        assert get_run(session, finished).status == "succeeded"
    assert not (tmp_path / "reports").exists()
    assert not prerender_report(sessions, waiting,
                                _reporting(url, tmp_path / "reports", ahead=True))
    assert not (tmp_path / "reports").exists()
