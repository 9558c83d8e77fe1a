"""The service end to end: a real ``foldline serve`` process (uvicorn and its embedded
worker) on loopback, driven over HTTP, on SQLite and on PostgreSQL."""

from __future__ import annotations

import csv
import io
import os
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.demo import _free_port, _scenario_csv, running_server
from tests.storage.conftest import BACKENDS, migrated_store

CANDIDATES = [{"family": "benchmark", "method": "naive"},
              {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
               "transform": "log"}]
PLAN = {"horizon": 3, "max_origins": 4, "refit": 2}


def _cli(env: dict[str, str], *args: str) -> str:
    done = subprocess.run([sys.executable, "-m", "service.cli", *args], env=env,
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    return done.stdout


@pytest.fixture(params=BACKENDS)
def service(request: pytest.FixtureRequest, tmp_path: Path):
    """A running server on a migrated store, and a bearer token per role used here."""
    with migrated_store(request.param, tmp_path) as url:
        env = {**os.environ, "FOLDLINE_DATABASE_URL": url, "FOLDLINE_HOST": "127.0.0.1",
               "FOLDLINE_PORT": str(_free_port()), "FOLDLINE_WORKER_JOBS": "1",
               "FOLDLINE_POLL_SECONDS": "0.2", "FOLDLINE_LEASE_SECONDS": "20"}
        tokens = {role: _cli(env, "keys", "create", "--role", role, "--name", f"e2e-{role}")
                  .splitlines()[0] for role in ("submitter", "reader")}
        with running_server(env, tmp_path / "server.log") as base:
            yield base, tokens


def _client(base: str, token: str) -> httpx.Client:
    return httpx.Client(base_url=base, headers={"Authorization": f"Bearer {token}"},
                        timeout=30)


def _wait(client: httpx.Client, location: str, timeout: float = 180.0) -> dict:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        run = client.get(location).json()
        if run["status"] in ("succeeded", "failed", "cancelled"):
            return run
        time.sleep(0.3)
    raise AssertionError(f"run at {location} did not finish within {timeout} s")


def test_submit_poll_and_pull_the_ranking_as_csv(service):
    base, tokens = service
    series = demo_series()[:2]
    keys = [s.key for s in series]
    body = {"series": {"keys": keys}, "candidates": CANDIDATES, "plan": PLAN}
    with _client(base, tokens["submitter"]) as submitter:
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
        run = _wait(submitter, first.headers["Location"])
    assert run["status"] == "succeeded", run["failure_reason"]
    assert run["progress"]["folds_done"] == run["progress"]["folds_total"] == 2 * 3 * 4

    with _client(base, tokens["reader"]) as reader:
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
    with _client(base, tokens["reader"]) as reader:
        refused = reader.post("/v1/runs", json=body)
    assert refused.status_code == 403
    assert refused.headers["content-type"].startswith("application/problem+json")
    stranger = httpx.get(f"{base}/v1/series", timeout=10)
    assert stranger.status_code == 401
    assert stranger.json()["status"] == 401
