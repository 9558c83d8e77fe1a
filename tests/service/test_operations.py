"""Operations: liveness, readiness (store reachable and migrated) and Prometheus metrics."""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path

import pytest

from storage.db import head_revision, upgrade
from tests.service.conftest import Api, serving
from tests.storage.builders import monthly_series

SAMPLE = re.compile(r'^[a-z_]+(\{([a-z_]+="[^"\n]*",?)+\})? [0-9.e+-]+$')


@pytest.fixture
def unmigrated(tmp_path: Path) -> Iterator[Api]:
    """An app on a store migrated only to the first revision (keys need the second)."""
    url = f"sqlite:///{tmp_path / 'old.db'}"
    upgrade(url, "0001")
    with serving(url, keys=False) as api:
        yield api


def _metrics(api: Api) -> dict[str, float]:
    response = api.client.get("/metrics")
    assert response.headers["content-type"] == "text/plain; version=0.0.4; charset=utf-8"
    lines = response.text.splitlines()
    assert all(line.startswith("# HELP ") or line.startswith("# TYPE ") or SAMPLE.match(line)
               for line in lines), response.text
    return {line.rsplit(" ", 1)[0]: float(line.rsplit(" ", 1)[1])
            for line in lines if not line.startswith("#")}


def test_liveness_needs_nothing(api: Api):
    assert api.client.get("/health/live").json() == {"status": "alive"}


def test_a_migrated_store_is_ready(api: Api):
    response = api.client.get("/health/ready")

    assert response.json() == {"status": "ready", "schema_revision": head_revision()}


def test_a_store_behind_on_migrations_is_not_ready(unmigrated: Api):
    response = unmigrated.client.get("/health/ready")

    assert response.status_code == 503
    assert response.json()["code"] == "not_ready"
    assert "foldline db upgrade" in response.json()["detail"]


def test_an_unreachable_store_is_not_ready_and_says_no_more():
    url = "postgresql+psycopg://nobody@127.0.0.1:9/none?connect_timeout=1"
    with serving(url, keys=False) as api:
        response = api.client.get("/health/ready")

        assert response.status_code == 503
        assert response.json()["detail"] == "the database cannot be reached"
        assert response.headers["retry-after"] == "5"


def test_metrics_count_requests_runs_and_folds(api: Api):
    api.post_series(monthly_series("a"))
    done = api.submit(["a"]).json()["id"]
    result = api.complete(done)
    api.submit(["a"])
    api.get("reader", "/v1/runs/999")

    metrics = _metrics(api)

    assert metrics["foldline_runs_queued"] == 1
    assert metrics["foldline_runs_running"] == 0
    assert metrics['foldline_runs_finished_total{status="succeeded"}'] == 1
    assert metrics['foldline_runs_finished_total{status="failed"}'] == 0
    assert metrics["foldline_folds_computed_total"] == result.timing["folds"] > 0
    assert metrics['foldline_http_requests_total{method="POST",route="/v1/runs",'
                   'status="202"}'] == 2
    assert metrics['foldline_http_requests_total{method="GET",route="/v1/runs/{run_id}",'
                   'status="404"}'] == 1
