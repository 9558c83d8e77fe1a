"""History for auditors: scores across runs, runs of a version, the audit log, verification."""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path

from sqlalchemy import func, select, text

from storage.audit import verify_audit_log
from storage.db import AuditEvent, utc_now
from storage.results import score_history
from tests.service.conftest import Api, copied_store, serving
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


def test_verification_continues_from_the_last_verified_head(api: Api):
    _two_runs(api)

    first = api.get("auditor", "/v1/audit/verification").json()
    again = api.get("auditor", "/v1/audit/verification").json()
    with api.sessions.begin() as session:
        session.execute(text("DROP TRIGGER observation_no_update"))
        session.execute(text("UPDATE observation SET value = value + 1 WHERE position = 3"))
    old_tamper = api.get("auditor", "/v1/audit/verification").json()
    with api.sessions.begin() as session:
        full = verify_audit_log(session)

    assert first["ok"] is True and first["mode"] == "full" and first["from_seq"] == 0
    assert first["events_checked"] == first["head_seq"] > 0
    assert again["ok"] is True and again["mode"] == "incremental"
    assert again["from_seq"] == first["head_seq"] and again["events_checked"] == 0
    # content written before the verified head is the full pass's to re-read
    assert old_tamper["ok"] is True and old_tamper["events_checked"] == 0
    assert not full.ok and "series_version" in (full.problem or "")


def test_verification_catches_tampering_after_the_verified_head(api: Api):
    _two_runs(api)
    head = api.get("auditor", "/v1/audit/verification").json()["head_seq"]
    api.post("submitter", "/v1/series/a/observations",
             json={"observations": [{"period": "2023-02", "value": 150.0}]})
    with api.sessions.begin() as session:
        session.execute(text("DROP TRIGGER observation_no_update"))
        session.execute(text("UPDATE observation SET value = value + 1 WHERE position = 3 "
                             "AND series_version_id = 3"))

    broken = api.get("auditor", "/v1/audit/verification").json()

    assert broken["ok"] is False and broken["mode"] == "incremental"
    assert broken["from_seq"] == head
    assert "series_version/3" in broken["problem"]


def test_an_app_with_the_audit_key_writes_keyed_events(sqlite_template: Path, tmp_path: Path):
    with serving(copied_store(sqlite_template, tmp_path),
                 audit_key="a-test-secret-of-enough-length") as api:
        with api.sessions.begin() as session:  # the keys, made before the app ran
            plain_prefix = session.scalar(select(func.max(AuditEvent.seq)))
        api.post_series(monthly_series("a", seed=1))
        report = api.get("auditor", "/v1/audit/verification").json()

    assert report["ok"] is True and report["keyed_from"] == plain_prefix + 1
    assert report["head_seq"] > plain_prefix + 1
