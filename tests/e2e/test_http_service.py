"""The service end to end: a real ``foldline serve`` process (uvicorn and its embedded
worker) on loopback, driven over HTTP, on SQLite and on PostgreSQL."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import httpx
import pytest

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.demo.run import _scenario_csv
from tests.e2e.serving import bearer_client, served, wait_for_run
from tests.storage.conftest import BACKENDS

CANDIDATES = [{"family": "benchmark", "method": "naive"},
              {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
               "transform": "log"}]
PLAN = {"horizon": 3, "max_origins": 4, "refit": 2}


@pytest.fixture(params=BACKENDS)
def service(request: pytest.FixtureRequest, tmp_path: Path):
    """A running server on a migrated store, and a bearer token per role used here."""
    with served(request.param, tmp_path, ("submitter", "reader")) as running:
        yield running


def test_submit_poll_and_pull_the_ranking_as_csv(service):
    base, tokens = service
    series = demo_series()[:2]
    keys = [s.key for s in series]
    body = {"series": {"keys": keys}, "candidates": CANDIDATES, "plan": PLAN}
    with bearer_client(base, tokens["submitter"]) as submitter:
        csv_text = "\n".join(line for line in _scenario_csv().splitlines()
                             if line.split(",")[0] in ("series_key", *keys)) + "\n"
        upload = submitter.post("/v1/series/upload", content=csv_text,
                                headers={"Content-Type": "text/csv"})
        assert upload.status_code == 201, upload.text
        first = submitter.post("/v1/runs", json=body, headers={"Idempotency-Key": "e2e-1"})
        assert first.status_code == 202, first.text
        retry = submitter.post("/v1/runs", json=body, headers={"Idempotency-Key": "e2e-1"})
        assert retry.json()["id"] == first.json()["id"]
        assert retry.headers["Location"] == first.headers["Location"]
        run = wait_for_run(submitter, first.headers["Location"])
    assert run["status"] == "succeeded", run["failure_reason"]
    assert run["progress"]["folds_done"] == run["progress"]["folds_total"] == 2 * 3 * 4

    with bearer_client(base, tokens["reader"]) as reader:
        answer = reader.get("/v1/rankings", params={"format": "csv", "metric": "mase"})
        assert answer.status_code == 200
        assert answer.headers["content-type"].startswith("text/csv")
        rows = list(csv.DictReader(io.StringIO(answer.text)))
        metrics = reader.get("/metrics").text
    assert len(rows) == 2 * 3
    direct = run_backtest(series, parse_candidates(CANDIDATES), parse_plan(PLAN))
    expected = {(sr.series["key"], r.candidate_id): r for sr in direct.series
                for r in sr.ranking}
    for row in rows:
        engine_row = expected[row["series_key"], row["candidate_id"]]
        assert int(row["rank"]) == engine_row.rank
        assert float(row["value"]) == pytest.approx(engine_row.score, rel=1e-12)
    assert "foldline_" in metrics


def test_a_reader_cannot_submit_and_a_stranger_is_refused(service):
    base, tokens = service
    body = {"series": {"keys": ["nothing"]}, "candidates": CANDIDATES, "plan": PLAN}
    with bearer_client(base, tokens["reader"]) as reader:
        refused = reader.post("/v1/runs", json=body)
    assert refused.status_code == 403
    assert refused.headers["content-type"].startswith("application/problem+json")
    stranger = httpx.get(f"{base}/v1/series", timeout=10)
    assert stranger.status_code == 401
    assert stranger.json()["status"] == 401
