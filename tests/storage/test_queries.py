"""Queries over stored runs, checked against the result objects the engine returned."""

from __future__ import annotations

import pytest
from sqlalchemy.orm import Session

from backtest.results import BacktestResult
from storage.results.queries import (
    latest_successful_run,
    latest_successful_runs,
    ranked_candidates,
    score_history,
)
from storage.runs import fail_run, get_run, queue_run, runs_using_version
from tests.storage.builders import (
    ACTOR,
    benchmark_candidates,
    monthly_series,
    run_and_store,
    small_plan,
)


def _score(result: BacktestResult, series: int, candidate: str, metric: str,
           horizon: int | None, level: int | None = None) -> float | None:
    return next(s.value for s in result.series[series].scores if (s.candidate_id, s.metric,
                s.horizon, s.level) == (candidate, metric, horizon, level))


@pytest.fixture
def history(session: Session) -> dict:
    """North: run 1 on version 1, run 2 on version 2 (more data); south: run 1 only;
    then a failed run on north's version 2."""
    first = run_and_store(session, [monthly_series("north", 40, seed=1),
                                    monthly_series("south", 40, seed=2)])
    second = run_and_store(session, [monthly_series("north", 44, seed=1)])
    failed = queue_run(session, series_version_ids=second[1], candidates=benchmark_candidates(),
                       plan=small_plan(), actor=ACTOR)
    fail_run(session, failed.id, actor=ACTOR, reason="out of memory")
    return {"first": first, "second": second, "failed": failed.id}


def test_latest_successful_run_per_series(session: Session, history: dict):
    first_run, first_versions, _ = history["first"]
    second_run, second_versions, _ = history["second"]

    latest = {row.series_key: row for row in latest_successful_runs(session)}

    assert sorted(latest) == ["north", "south"]
    assert (latest["north"].run_id, latest["north"].series_version_id) == (second_run,
                                                                           second_versions[0])
    assert latest["north"].version_number == 2
    assert (latest["south"].run_id, latest["south"].series_version_id) == (first_run,
                                                                           first_versions[1])
    assert latest_successful_run(session, "north") == latest["north"]
    assert latest_successful_run(session, "west") is None


@pytest.mark.parametrize(("metric", "horizon", "level"), [("mase", None, None),
                                                          ("rmse", 2, None),
                                                          ("coverage", 1, 80)])
def test_candidates_ranked_by_a_chosen_score(session: Session, history: dict, metric: str,
                                             horizon: int | None, level: int | None):
    _, _, result = history["second"]
    expected = sorted((s.value, s.candidate_id) for s in result.series[0].scores
                       if (s.metric, s.horizon, s.level) == (metric, horizon, level))

    ranked = ranked_candidates(session, "north", metric=metric, horizon=horizon, level=level)

    assert [(r.value, r.candidate_id) for r in ranked] == expected
    assert [r.rank for r in ranked] == [1 + sum(v < value for v, _ in expected)
                                        for value, _ in expected]
    labels = {c.candidate_id: c.label for c in result.series[0].candidates}
    assert all(r.label == labels[r.candidate_id] for r in ranked)
    highest = ranked_candidates(session, "north", metric=metric, horizon=horizon, level=level,
                                best="highest")
    assert [r.value for r in highest] == [value for value, _ in reversed(expected)]
    assert highest[0].rank == 1


def test_score_history_of_a_candidate_across_runs(session: Session, history: dict):
    first_run, first_versions, first = history["first"]
    second_run, second_versions, second = history["second"]
    candidate = benchmark_candidates()[1].id

    points = score_history(session, "north", candidate, metric="mase", horizon=3)

    assert [(p.run_id, p.series_version_id, p.version_number) for p in points] == [
        (first_run, first_versions[0], 1), (second_run, second_versions[0], 2)]
    assert [p.value for p in points] == [_score(first, 0, candidate, "mase", 3),
                                         _score(second, 0, candidate, "mase", 3)]
    assert points[0].finished_at <= points[1].finished_at


def test_runs_that_used_a_series_version(session: Session, history: dict):
    first_run, first_versions, _ = history["first"]
    second_run, second_versions, _ = history["second"]

    using_v2 = runs_using_version(session, second_versions[0])
    using_south = runs_using_version(session, first_versions[1])

    assert [r.id for r in using_v2] == [second_run, history["failed"]]
    assert [r.status for r in using_v2] == ["succeeded", "failed"]
    assert using_south == [get_run(session, first_run)]
