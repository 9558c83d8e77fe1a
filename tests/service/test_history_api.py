"""History for auditors: scores across runs, runs of a version, the audit log, verification."""

from __future__ import annotations

from datetime import timedelta

from sqlalchemy import text

from storage.db import utc_now
from storage.results import score_history
from tests.service.conftest import Api
from tests.storage.builders import monthly_series


def _two_runs(api: Api) -> tuple[int, int]:
    api.post_series(monthly_series("a", seed=1))
    first = api.submit(["a"]).json()["id"]
    api.complete(first)
    api.post("submitter", "/v1/series/a/observations",
             json={"observations": [{"period": "2023-01", "value": 140.0}]})
    second = api.submit(["a"]).json()["id"]
    api.complete(second)
    return first, second


def test_a_candidates_scores_across_runs_oldest_first(api: Api):
    first, second = _two_runs(api)
    candidate = api.get("reader", f"/v1/runs/{first}/ranking").json()["items"][0]

    history = api.get("auditor", "/v1/history/scores?series_key=a&candidate_id="
                      f"{candidate['candidate_id']}&metric=mae&horizon=2").json()

    assert [(p["run_id"], p["series_version"]) for p in history["points"]] == [(first, 1),
                                                                               (second, 2)]
    with api.sessions.begin() as session:
        reference = score_history(session, "a", candidate["candidate_id"], metric="mae",
                                  horizon=2)
    assert [p["value"] for p in history["points"]] == [p.value for p in reference]


def test_the_runs_that_used_a_version(api: Api):
    first, second = _two_runs(api)
    third = api.submit(["a"]).json()["id"]

    one = api.get("auditor", "/v1/history/version-runs?series_key=a&version=1").json()
    two = api.get("auditor", "/v1/history/version-runs?series_key=a&version=2").json()

    assert [r["id"] for r in one["runs"]] == [first]
    assert [(r["id"], r["status"]) for r in two["runs"]] == [(second, "succeeded"),
                                                             (third, "queued")]
    assert api.get("auditor", "/v1/history/version-runs?series_key=a&version=9"
                   ).status_code == 404


def test_audit_events_in_a_time_range_page_in_log_order(api: Api):
    before = utc_now()
    api.post_series(monthly_series("a"))
    api.submit(["a"])
    after = utc_now() + timedelta(seconds=1)

    pages = [api.get("auditor", "/v1/audit/events", params={
        "start": before.isoformat(), "end": after.isoformat(), "limit": 2}).json()]
    while pages[-1]["next"]:
        pages.append(api.get("auditor", pages[-1]["next"]).json())
    events = [e for p in pages for e in p["items"]]
    empty = api.get("auditor", "/v1/audit/events", params={"end": before.isoformat()}).json()

    assert [e["action"] for e in events] == ["series.created", "series_version.created",
                                             "plan.registered", "candidate.registered",
                                             "candidate.registered", "run.queued"]
    assert [e["seq"] for e in events] == sorted(e["seq"] for e in events)
    assert {e["actor"] for e in events} == {"submitter"}
    assert [e["action"] for e in empty["items"]] == ["api_key.created"] * 4


def test_verification_reports_an_intact_chain_and_then_tampering(api: Api):
    _two_runs(api)

    intact = api.get("auditor", "/v1/audit/verification").json()
    with api.sessions.begin() as session:
        session.execute(text("DROP TRIGGER observation_no_update"))
        session.execute(text("UPDATE observation SET value = value + 1 WHERE position = 3"))
    broken = api.get("auditor", "/v1/audit/verification").json()

    assert intact["ok"] is True and intact["problem"] is None
    assert broken["ok"] is False and "series_version" in broken["problem"]
