"""Per-key quotas at submission, on SQLite and PostgreSQL: runs waiting and the fit budget
per period are answered 429 with Retry-After and an RFC 9457 problem; nothing is queued."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import func, select

from backtest.candidates import parse_candidates
from backtest.cost import estimate_cost
from backtest.plan import parse_plan
from service.usecases.keys import issue_key
from storage.db import Run
from tests.service.conftest import CANDIDATES, PLAN, Api, serving
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS, migrated_store

PERIOD = 3600
KEYS = ["q/a", "q/b", "q/c"]
# The fits one run on one of the series above takes, by the estimate made at submission.
ONE_RUN = estimate_cost([monthly_series("q/a")], parse_candidates(CANDIDATES),
                        parse_plan(PLAN)).total_fits


@pytest.fixture(params=BACKENDS)
def backend(request: pytest.FixtureRequest) -> str:
    return request.param


def _served(backend: str, tmp_path: Path, **settings) -> Iterator[Api]:
    with migrated_store(backend, tmp_path) as url, serving(url, **settings) as api:
        with api.sessions.begin() as session:
            api.tokens["other"] = issue_key(session, name="other", role="submitter",
                                            actor="setup")[1].text
        for key in KEYS:
            assert api.post_series(monthly_series(key)).status_code == 201
        yield api


@pytest.fixture
def short_queue(backend: str, tmp_path: Path) -> Iterator[Api]:
    yield from _served(backend, tmp_path, key_max_queued_runs=2)


@pytest.fixture
def small_budget(backend: str, tmp_path: Path) -> Iterator[Api]:
    yield from _served(backend, tmp_path, key_fits_per_period=2 * ONE_RUN + 1,
                       quota_period_seconds=PERIOD)


def _submit(api: Api, role: str, keys: list[str]):
    body = {"series": {"keys": keys}, "candidates": CANDIDATES, "plan": PLAN}
    return api.post(role, "/v1/runs", json=body)


def _runs(api: Api) -> int:
    with api.sessions.begin() as session:
        return session.scalar(select(func.count()).select_from(Run))


def test_a_key_with_its_most_runs_waiting_gets_429_and_others_do_not(short_queue: Api):
    first = _submit(short_queue, "submitter", ["q/a"])
    assert first.status_code == 202
    assert _submit(short_queue, "submitter", ["q/b"]).status_code == 202

    refused = _submit(short_queue, "submitter", ["q/c"])

    assert refused.status_code == 429
    assert refused.headers["content-type"] == "application/problem+json"
    problem = refused.json()
    assert (problem["code"], problem["status"], problem["type"]) == (
        "quota_exceeded", 429, "urn:foldline:problem:quota_exceeded")
    assert problem["usage"]["queued_runs"] == 2 and problem["limit"]["queued_runs"] == 2
    assert "FOLDLINE_KEY_MAX_QUEUED_RUNS" in problem["detail"]
    # no run of this key has finished yet: the default wait
    assert refused.headers["retry-after"] == str(problem["retry_after"]) == "30"
    assert _runs(short_queue) == 2
    assert _submit(short_queue, "other", ["q/c"]).status_code == 202
    # cancelling a waiting run makes room at once
    url = first.headers["location"]
    assert short_queue.post("submitter", f"{url}/cancel").status_code == 200
    assert _submit(short_queue, "submitter", ["q/c"]).status_code == 202


def test_a_key_past_its_fit_budget_gets_429_until_its_runs_leave_the_window(
        small_budget: Api):
    first = _submit(small_budget, "submitter", ["q/a"])
    assert first.status_code == 202
    assert _submit(small_budget, "submitter", ["q/b"]).status_code == 202
    with small_budget.sessions.begin() as session:
        assert session.scalars(select(Run.estimated_fits)).all() == [ONE_RUN, ONE_RUN]

    refused = _submit(small_budget, "submitter", ["q/c"])

    assert refused.status_code == 429
    problem = refused.json()
    assert problem["usage"]["fits_in_period"] == 2 * ONE_RUN
    assert problem["limit"]["fits_per_period"] == 2 * ONE_RUN + 1
    # the first run leaves the window an hour after it was queued, a moment ago
    retry = int(refused.headers["retry-after"])
    assert retry == problem["retry_after"] and PERIOD - 60 < retry <= PERIOD
    assert _runs(small_budget) == 2
    assert _submit(small_budget, "other", ["q/c"]).status_code == 202
    # a run cancelled before it started computed nothing and costs nothing
    assert small_budget.post("submitter", first.headers["location"] + "/cancel").status_code \
        == 200
    assert _submit(small_budget, "submitter", ["q/c"]).status_code == 202


def test_a_run_larger_than_the_whole_budget_is_a_422(small_budget: Api):
    refused = _submit(small_budget, "submitter", KEYS)

    assert refused.status_code == 422
    problem = refused.json()
    assert problem["code"] == "limit_exceeded"
    assert problem["estimate"]["total_fits"] == 3 * ONE_RUN
    assert problem["limit"] == {"fits_per_period": 2 * ONE_RUN + 1}
    assert _runs(small_budget) == 0
