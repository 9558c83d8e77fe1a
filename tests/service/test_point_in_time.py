"""``as_of`` on the reads that answer "what was true": champions, their history and the BI
ranking, on SQLite and PostgreSQL. Records are append-only, so the past is a filter."""

from __future__ import annotations

import time
from datetime import UTC, datetime

from backtest.candidates import parse_candidate
from tests.service.conftest import CANDIDATES, Api
from tests.storage.builders import monthly_series

NAIVE, DRIFT = (parse_candidate(spec).id for spec in CANDIDATES)
THETA = {"family": "theta"}


def _pause() -> str:
    time.sleep(0.02)
    moment = datetime.now(UTC).isoformat()
    time.sleep(0.02)
    return moment


def test_champions_and_rankings_as_they_stood(any_api: Api):
    api = any_api
    api.post_series(monthly_series("a", seed=1))
    before = _pause()
    api.complete(api.submit(["a"]).json()["id"])
    api.post("submitter", "/v1/series/a/champion",
             json={"candidate_id": NAIVE, "run_id": 1, "reason": "first look"})
    middle = _pause()
    api.complete(api.submit(["a"], candidates=[*CANDIDATES, THETA]).json()["id"])
    api.post("submitter", "/v1/series/a/champion",
             json={"candidate_id": DRIFT, "run_id": 2, "reason": "second look"})

    def champion(**params: str) -> tuple[int, str | None]:
        answer = api.get("reader", "/v1/series/a/champion", params=params)
        return answer.status_code, answer.json().get("candidate_id")

    def ranking(**params: str) -> set[tuple[int, str]]:
        answer = api.get("reader", "/v1/rankings", params=params)
        assert answer.status_code == 200, answer.text
        return {(row["run_id"], row["candidate_id"]) for row in answer.json()["items"]}

    assert champion() == (200, DRIFT)
    assert champion(as_of=middle) == (200, NAIVE)
    assert champion(as_of=before)[0] == 404
    assert [c["candidate_id"] for c in api.get(
        "auditor", "/v1/series/a/champion/history", params={"as_of": middle}).json()["items"]
            ] == [NAIVE]
    assert [c["candidate_id"] for c in api.get(
        "reader", "/v1/champions", params={"as_of": middle}).json()["items"]] == [NAIVE]
    assert api.get("reader", "/v1/champions", params={"as_of": before}).json()["items"] == []

    def ranked_in(run_id: int) -> set[tuple[int, str]]:
        rows = api.get("reader", f"/v1/runs/{run_id}/ranking").json()["items"]
        return {(run_id, row["candidate_id"]) for row in rows}

    assert parse_candidate(THETA).id in {c for _, c in ranked_in(2)} - {c for _, c in ranked_in(1)}
    assert ranking() == ranked_in(2)
    assert ranking(as_of=middle) == ranked_in(1)
    assert ranking(as_of=before) == set()
    assert ranking(as_of=datetime.now(UTC).date().isoformat()) == ranking()  # end of today


def test_a_bad_as_of_is_a_422_naming_it(api: Api):
    for url in ("/v1/rankings", "/v1/champions", "/v1/series/a/champion"):
        answer = api.get("reader", url, params={"as_of": "last March"})

        assert answer.status_code == 422, url
        assert "as_of" in answer.json()["detail"]
