"""The forecast ledger end to end: a real ``foldline serve`` (uvicorn and its embedded
worker) on loopback, on SQLite and on PostgreSQL. Champions are chosen from a run's
suggestions, forecasts issued month by month while actuals arrive, the worker scores the
outcomes, and monitoring flags the series that shifted away from its champion."""

from __future__ import annotations

import csv
import io
import time
from pathlib import Path

import httpx
import pytest

from tests.e2e.serving import bearer_client, served, wait_for_run
from tests.service.conftest import series_body
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS

KNOWN, MONTHS = 48, 8
STEADY = monthly_series("ledger/steady", KNOWN + MONTHS, seed=21)
SHIFTED = monthly_series("ledger/shifted", KNOWN + MONTHS, seed=22, level=120.0)
SHIFT_FROM, SHIFT = KNOWN + 2, 45.0
CANDIDATES = [{"family": "benchmark", "method": "seasonal_naive"},
              {"family": "benchmark", "method": "drift"}]
PLAN = {"horizon": 3, "max_origins": 14}


def _actual(series, index: int) -> float:
    shift = SHIFT if series is SHIFTED and index >= SHIFT_FROM else 0.0
    return round(float(series.values[index]) + shift, 2)


@pytest.fixture(params=BACKENDS, name="served")
def served_with_roles(request: pytest.FixtureRequest, tmp_path: Path):
    """A running server on a migrated store, and a token per role used here."""
    with served(request.param, tmp_path, ("submitter", "auditor")) as running:
        yield running


def _post_known(client: httpx.Client) -> None:
    for series in (STEADY, SHIFTED):
        body = series_body(series)
        body["observations"] = body["observations"][:KNOWN]
        assert client.post("/v1/series", json=body).status_code == 201


def _wait_scored(auditor: httpx.Client, forecasts: list[dict], timeout: float = 60.0) -> None:
    last = STEADY.label(KNOWN + MONTHS - 1)
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        pending = [f for f in forecasts if not _scored(auditor, f, last)]
        if not pending:
            return
        time.sleep(0.2)
    raise AssertionError(f"{len(pending)} forecasts were not scored within {timeout} s")


def _scored(auditor: httpx.Client, forecast: dict, last: str) -> bool:
    due = [s["period"] for s in forecast["steps"] if s["period"] <= last]
    sets = auditor.get(forecast["links"]["outcomes"]).json()["sets"]
    return bool(sets) and [o["period"] for o in sets[0]["outcomes"]] == due


def test_champions_ledger_outcomes_and_a_drift_flag_over_http(served):
    base, tokens = served
    with bearer_client(base, tokens["submitter"]) as submitter, \
            bearer_client(base, tokens["auditor"]) as auditor:
        _post_known(submitter)
        run = submitter.post("/v1/runs", json={"series": {"keys": [STEADY.key, SHIFTED.key]},
                                               "candidates": CANDIDATES, "plan": PLAN})
        run = wait_for_run(submitter, run.headers["Location"])
        assert run["status"] == "succeeded"
        suggested = auditor.get(f"{run['url']}/champion-suggestions").json()["items"]
        for s in suggested:
            chosen = submitter.post(f"/v1/series/{s['series_key']}/champion", json={
                "candidate_id": s["candidate_id"], "run_id": run["id"],
                "reason": "suggested by the run"})
            assert chosen.status_code == 201, chosen.text
        refused = auditor.post("/v1/forecasts", json={"series_key": STEADY.key, "horizon": 3})
        forecasts = []
        for month in range(MONTHS):
            for series in (STEADY, SHIFTED):
                issued = submitter.post("/v1/forecasts",
                                        json={"series_key": series.key, "horizon": 3})
                assert issued.status_code == 201, issued.text
                forecasts.append(issued.json())
                index = KNOWN + month
                appended = submitter.post(f"/v1/series/{series.key}/observations", json={
                    "observations": [{"period": series.label(index),
                                      "value": _actual(series, index)}]})
                assert appended.status_code == 201, appended.text
        _wait_scored(auditor, forecasts)
        shifted = auditor.get(f"/v1/series/{SHIFTED.key}/monitoring").json()
        steady = auditor.get(f"/v1/series/{STEADY.key}/monitoring").json()
        flags = auditor.get("/v1/monitoring", params={"state": "raised",
                                                      "format": "csv"}).text
        ledger = auditor.get("/v1/forecasts", params={"series_key": SHIFTED.key,
                                                      "horizon": 1}).json()["items"]
        history = auditor.get(f"/v1/series/{SHIFTED.key}/champion/history").json()["items"]
        first = forecasts[1]
        outcome = auditor.get(first["links"]["outcomes"]).json()["sets"][0]["outcomes"][0]

    assert refused.status_code == 403
    assert [h["candidate_id"] for h in history] == [
        s["candidate_id"] for s in suggested if s["series_key"] == SHIFTED.key]
    assert len(ledger) == MONTHS and all(len(f["steps"]) == 1 for f in ledger)
    assert outcome["actual"] == _actual(SHIFTED, KNOWN)
    assert outcome["error"] == pytest.approx(outcome["actual"] - first["steps"][0]["point"])
    assert shifted["forecasts"] == MONTHS and shifted["expectation"]["run_id"] == run["id"]
    assert shifted["raised"], shifted["flags"]
    assert steady["raised"] == [], steady["flags"]
    raised = list(csv.DictReader(io.StringIO(flags)))
    assert {r["series_key"] for r in raised} == {SHIFTED.key}
    assert {r["rule"] for r in raised} == set(shifted["raised"])
