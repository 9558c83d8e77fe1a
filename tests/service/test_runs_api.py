"""Runs over HTTP: queued (never computed in the request), idempotent, checked, cancelled."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select

from backtest.candidates import parse_candidate, parse_candidates
from backtest.engine import planned_fold_count, run_backtest
from backtest.plan import parse_plan
from storage.db import AuditEvent, Run, SeriesResultRecord
from storage.runs import claim_run, run_request
from storage.series import load_series
from tests.service.conftest import Api
from tests.storage.builders import monthly_series


@pytest.fixture
def two_series(api: Api) -> Api:
    api.post_series(monthly_series("a", seed=1), tags={"group": "x"})
    api.post_series(monthly_series("b", seed=2), tags={"group": "x"})
    return api


def _count(api: Api, model) -> int:
    with api.sessions.begin() as session:
        return session.scalar(select(func.count()).select_from(model))


def test_a_submission_is_queued_and_answered_202_with_its_url(two_series: Api):
    response = two_series.submit(["a", "b"])

    run = response.json()
    assert response.status_code == 202
    assert response.headers["location"] == run["url"] == f"/v1/runs/{run['id']}"
    assert run["status"] == "queued" and run["progress"]["folds_done"] == 0
    assert [(s["key"], s["version"]) for s in run["series"]] == [("a", 1), ("b", 1)]
    assert run["requested_by"] == "submitter"
    assert _count(two_series, SeriesResultRecord) == 0
    assert two_series.get("reader", run["url"]).json()["status"] == "queued"


def test_folds_are_counted_once_at_submission_and_handed_to_the_worker(two_series: Api):
    run = two_series.submit(["a", "b"]).json()

    with two_series.sessions.begin() as session:
        request = run_request(session, run["id"])
        series = [load_series(session, v) for v in request.run.series_version_ids]
    candidates = [parse_candidate(s) for s in request.candidate_specs]
    plan = parse_plan(request.plan_body)
    engine_counts = tuple(planned_fold_count([one], candidates, plan) for one in series)
    assert request.unit_folds == engine_counts
    assert run["progress"]["folds_total"] == sum(engine_counts) > 0


def test_a_tag_selection_takes_every_series_with_the_tags(two_series: Api):
    two_series.post_series(monthly_series("c", seed=3), tags={"group": "y"})
    body = {"series": {"tags": {"group": "x"}}, "candidates": [{"family": "theta"}],
            "plan": {"horizon": 2}}

    response = two_series.post("submitter", "/v1/runs", json=body)

    assert [s["key"] for s in response.json()["series"]] == ["a", "b"]


def test_a_retried_submission_with_the_same_key_returns_the_original_run(two_series: Api):
    first = two_series.submit(["a"], headers={"Idempotency-Key": "order-17"})
    two_series.post("submitter", "/v1/series/a/observations",
                    json={"observations": [{"period": "2023-01", "value": 130.0}]})
    retried = two_series.submit(["a"], headers={"Idempotency-Key": "order-17"})
    other = two_series.submit(["b"], headers={"Idempotency-Key": "order-17"})

    assert retried.status_code == 202 and retried.json()["id"] == first.json()["id"]
    assert retried.json()["idempotency_key"] == "order-17"
    assert retried.json()["series"][0]["version"] == 1
    assert other.status_code == 409
    assert _count(two_series, Run) == 1


def test_idempotency_keys_belong_to_the_key_that_used_them(two_series: Api):
    mine = two_series.submit(["a"], headers={"Idempotency-Key": "k1"})
    with two_series.sessions.begin() as session:
        from service.usecases.keys import issue_key
        token = issue_key(session, name="other-submitter", role="submitter", actor="t")[1]
    body = {"series": {"keys": ["a"]}, "candidates": [{"family": "theta"}],
            "plan": {"horizon": 2}}

    theirs = two_series.client.post("/v1/runs", json=body, headers={
        "Authorization": f"Bearer {token.text}", "Idempotency-Key": "k1"})

    assert theirs.status_code == 202 and theirs.json()["id"] != mine.json()["id"]


@pytest.mark.parametrize(("candidates", "plan", "code", "pointer"), [
    ([{"family": "crystal_ball"}], {"horizon": 3}, "invalid_request", "/candidates/0/family"),
    ([{"family": "arima", "order": [9, 0, 0]}], {"horizon": 3}, "invalid_candidate",
     "/candidates/0"),
    ([{"family": "theta"}, {"family": "theta", "season": "test"}], {"horizon": 3},
     "invalid_candidate", "/candidates/1"),
    ([{"family": "theta"}], {"horizon": 0}, "invalid_plan", "/plan"),
    ([{"family": "theta"}], {"horizon": 3, "frequency": "weekly"}, "invalid_plan",
     "/plan"),
    ([{"family": "theta"}], {"horizon": 40}, "invalid_plan", "/plan"),
    ([{"family": "theta"}], {"horizon": 3, "first_origin": {"period": "2001-01"}},
     "invalid_plan", "/plan"),
    ([{"family": "ets", "season": "multiplicative"}], {"horizon": 3, "first_origin": {
        "train_size": 5}}, "invalid_plan", "/plan"),
])
def test_an_impossible_submission_is_refused_and_nothing_is_queued(two_series: Api, candidates,
                                                                   plan, code, pointer):
    response = two_series.submit(["a"], candidates=candidates, plan=plan)

    assert response.status_code == 422, response.text
    assert response.json()["code"] == code
    assert pointer in [e["pointer"] for e in response.json()["errors"]]
    assert _count(two_series, Run) == 0


@pytest.mark.parametrize(("selection", "pointer"), [
    ({"keys": ["a", "nope"]}, "/series/keys/1"), ({"tags": {"group": "none"}}, "/series/tags"),
    ({"keys": ["a"], "tags": {"group": "x"}}, "/series"), ({"keys": []}, "/series/keys")])
def test_a_selection_of_missing_series_is_refused(two_series: Api, selection, pointer):
    response = two_series.post("submitter", "/v1/runs", json={
        "series": selection, "candidates": [{"family": "theta"}], "plan": {"horizon": 2}})

    assert response.status_code == 422
    assert [e["pointer"] for e in response.json()["errors"]] == [pointer]


def test_the_fold_count_checked_at_submission_is_the_engines(two_series: Api):
    series = [monthly_series("a", seed=1), monthly_series("b", n=30, seed=2)]
    candidates = parse_candidates([{"family": "theta"}, {"family": "benchmark",
                                                          "method": "drift"}])
    plan = parse_plan({"horizon": 4, "step": 2})
    totals = []

    run_backtest(series, candidates, plan, progress=lambda done, total: totals.append(total))

    assert planned_fold_count(series, candidates, plan) == totals[0]


def test_cancelling_a_queued_run_ends_it_at_once(two_series: Api):
    run = two_series.submit(["a"]).json()

    response = two_series.post("submitter", f"{run['url']}/cancel")

    assert response.status_code == 200
    assert response.json()["status"] == "cancelled"
    assert response.json()["failure_reason"] == "cancelled by submitter"


def test_cancelling_a_run_a_worker_holds_asks_the_worker_to_stop(two_series: Api):
    run = two_series.submit(["a"]).json()
    with two_series.sessions.begin() as session:
        claim_run(session, owner="w1", lease_seconds=300)

    response = two_series.post("submitter", f"{run['url']}/cancel")

    assert response.status_code == 202
    assert response.json()["status"] == "running"
    assert response.json()["cancel_requested_by"] == "submitter"
    assert two_series.get("reader", run["url"]).json()["cancel_requested_by"] == "submitter"


def test_a_finished_run_cannot_be_cancelled(two_series: Api):
    run = two_series.submit(["a"]).json()
    two_series.complete(run["id"])

    response = two_series.post("submitter", f"{run['url']}/cancel")

    assert response.status_code == 409
    assert two_series.get("reader", run["url"]).json()["status"] == "succeeded"


def test_a_running_run_reports_progress_and_time_left(two_series: Api):
    run = two_series.submit(["a", "b"]).json()
    with two_series.sessions.begin() as session:
        claim_run(session, owner="w1", lease_seconds=300)
        session.get(Run, run["id"]).folds_total = 40
        session.get(Run, run["id"]).folds_done = 10

    state = two_series.get("reader", run["url"]).json()

    assert state["status"] == "running"
    assert state["progress"] == {"folds_done": 10, "folds_total": 40, "fraction": 0.25}
    seconds = state["timings"]["ran_seconds"]
    assert state["timings"]["estimated_seconds_left"] == pytest.approx(3 * seconds, rel=0.5)


def test_every_write_is_audited_with_the_keys_name(two_series: Api):
    run = two_series.submit(["a"]).json()
    two_series.post("submitter", f"{run['url']}/cancel")

    with two_series.sessions.begin() as session:
        actors = dict(session.execute(select(AuditEvent.action, AuditEvent.actor)
                                      .where(AuditEvent.action.in_(
                                          ["series_version.created", "run.queued",
                                           "run.finished"]))).all())

    assert actors == {"series_version.created": "submitter", "run.queued": "submitter",
                      "run.finished": "submitter"}
