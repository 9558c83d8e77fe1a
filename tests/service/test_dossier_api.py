"""The series dossier on SQLite and PostgreSQL: the champion and its justification, the data
versions, the issued forecasts with realised accuracy beside the backtest's promise, the
audit events, all as they stood at ``as_of``; JSON and CSV."""

from __future__ import annotations

import csv
import io
import time
from datetime import UTC, datetime

import numpy as np
import pytest
from sqlalchemy import select

from backtest.candidates import parse_candidate
from service.cli.main import main
from service.usecases.score_outcomes import score_due_outcomes
from storage.db import SeriesRecord, SeriesVersion
from tests.service.conftest import CANDIDATES, Api
from tests.storage.builders import monthly_series

SERIES = monthly_series("sales/north", 48, seed=3)
NAIVE, DRIFT = (parse_candidate(spec).id for spec in CANDIDATES)
URL = "/v1/series/sales/north/dossier"


def _pause() -> datetime:
    """A moment strictly between what was stored before and what is stored after."""
    time.sleep(0.02)
    moment = datetime.now(UTC)
    time.sleep(0.02)
    return moment


@pytest.fixture
def story(any_api: Api) -> tuple[Api, datetime, list[int]]:
    """Run 1 backtests naive and drift; naive is chosen and issues forecast 1 at 2022-12;
    (the moment returned); two actuals arrive and are scored; drift is chosen and issues
    forecast 2 at 2023-02. Another series stands beside it."""
    api = any_api
    assert api.post_series(SERIES).status_code == 201
    assert api.post_series(monthly_series("sales/south", 48, seed=4)).status_code == 201
    api.complete(api.submit([SERIES.key]).json()["id"])
    choose = {"run_id": 1}
    api.post("submitter", "/v1/series/sales/north/champion",
             json={**choose, "candidate_id": NAIVE, "reason": "simplest that holds up"})
    first = api.post("submitter", "/v1/forecasts", json={"series_key": SERIES.key, "horizon": 3})
    moment = _pause()
    api.post("submitter", "/v1/series/sales/north/observations", json={"observations": [
        {"period": "2023-01", "value": 130.0}, {"period": "2023-02", "value": 131.0}]})
    score_due_outcomes(api.sessions, actor="worker-test")
    api.post("submitter", "/v1/series/sales/north/champion",
             json={**choose, "candidate_id": DRIFT, "reason": "trend matters"})
    second = api.post("submitter", "/v1/forecasts",
                      json={"series_key": SERIES.key, "horizon": 3})
    return api, moment, [first.json()["id"], second.json()["id"]]


def test_the_dossier_answers_which_model_why_and_how_it_fared(story):
    api, _, (first, second) = story

    dossier = api.get("auditor", URL).json()

    assert dossier["champion"]["candidate_id"] == DRIFT
    assert [(c["candidate_id"], c["reason"]) for c in dossier["champion_history"]] == [
        (NAIVE, "simplest that holds up"), (DRIFT, "trend matters")]
    labels = {c["id"]: c["label"] for c in api.get("reader", "/v1/runs/1").json()["candidates"]}
    assert dossier["champion"]["candidate"] == labels[DRIFT]
    scores = api.get("reader", "/v1/runs/1/scores", params={"format": "json"}).json()["items"]
    promised = {s["horizon"]: s["value"] for s in scores if s["candidate_id"] == NAIVE
                and s["metric"] == "mase" and s["horizon"] is not None and s["level"] is None}
    naive_choice = dossier["champion_history"][0]["justification"]
    assert naive_choice["run_id"] == 1 and naive_choice["run_url"] == "/v1/runs/1"
    assert {int(h): v for h, v in naive_choice["mase_by_horizon"].items()} == promised
    assert [v["version"] for v in dossier["versions"]] == [1, 2]
    assert [f["forecast_id"] for f in dossier["forecasts"]] == [first, second]

    issued = dossier["forecasts"][0]
    outcomes = api.get("auditor", f"/v1/forecasts/{first}/outcomes").json()["sets"][-1]
    scaled = [o["scaled_error"] for o in outcomes["outcomes"]]
    assert issued["outcomes_known"] == 2 and issued["scored_on_version"] == 2
    assert issued["realised_mase"] == pytest.approx(np.mean(np.abs(scaled)), rel=1e-12)
    assert issued["promised_mase"] == pytest.approx((promised[1] + promised[2]) / 2, rel=1e-12)
    assert issued["candidate"] == labels[NAIVE] and issued["origin"] == "2022-12"
    assert dossier["forecasts"][1]["outcomes_known"] == 0
    assert dossier["forecasts"][1]["realised_mase"] is None

    subjects = {e["subject"] for e in dossier["events"]}
    assert {f"issued_forecast/{first}", f"issued_forecast/{second}", "champion_choice/1",
            "champion_choice/2"} <= subjects
    assert any(s.startswith(f"outcome_set/{first}/") for s in subjects)
    with api.sessions.begin() as session:
        south = session.scalar(select(SeriesRecord.id).where(SeriesRecord.key == "sales/south"))
        south_versions = session.scalars(select(SeriesVersion.id)
                                         .where(SeriesVersion.series_id == south)).all()
    assert f"series/{south}" not in subjects
    assert not {f"series_version/{v}" for v in south_versions} & subjects
    assert [e["seq"] for e in dossier["events"]] == sorted(e["seq"] for e in dossier["events"])


def test_as_of_shows_the_dossier_as_it_stood_then(story):
    api, moment, (first, _) = story

    then = api.get("auditor", URL, params={"as_of": moment.isoformat()}).json()

    assert then["champion"]["candidate_id"] == NAIVE
    assert len(then["champion_history"]) == 1
    assert [v["version"] for v in then["versions"]] == [1]
    assert [f["forecast_id"] for f in then["forecasts"]] == [first]
    assert then["forecasts"][0]["outcomes_known"] == 0  # the actuals came later
    assert all(datetime.fromisoformat(e["occurred_at"]) <= moment for e in then["events"])
    assert len(then["events"]) < len(api.get("auditor", URL).json()["events"])

    before_anything = api.get("auditor", URL, params={"as_of": "2000-01-01"}).json()
    assert before_anything["champion"] is None and before_anything["forecasts"] == []
    naive_time = moment.replace(tzinfo=None).isoformat()  # read as UTC
    assert api.get("auditor", URL, params={"as_of": naive_time}).json() == then


def test_forecasts_filter_by_origin_target_and_issue_time(story):
    api, moment, (first, second) = story

    def issued(**params: str) -> list[int]:
        response = api.get("auditor", URL, params=params)
        assert response.status_code == 200, response.text
        return [f["forecast_id"] for f in response.json()["forecasts"]]

    assert issued(target_to="2023-02") == [first]
    assert issued(target_from="2023-04") == [second]
    assert issued(target_from="2023-03", target_to="2023-03") == [first, second]
    assert issued(origin_from="2023-01") == [second]
    assert issued(origin_to="2022-12") == [first]
    assert issued(issued_to=moment.isoformat()) == [first]
    assert issued(issued_from=moment.isoformat()) == [second]


def test_the_csv_has_a_row_per_step_with_the_actual_and_the_promise(story):
    api, _, (first, second) = story

    response = api.get("auditor", URL, headers={"Accept": "text/csv"})
    rows = list(csv.DictReader(io.StringIO(response.text)))

    assert response.headers["content-type"].startswith("text/csv")
    assert [(int(r["forecast_id"]), r["period"]) for r in rows] == [
        (first, "2023-01"), (first, "2023-02"), (first, "2023-03"),
        (second, "2023-03"), (second, "2023-04"), (second, "2023-05")]
    assert [r["actual"] for r in rows[:3]] == ["130.0", "131.0", ""]
    assert rows[0]["hits"] and rows[0]["promised_mase"]
    assert rows[3]["promised_mase"]  # drift's promise from the same run


def test_bad_requests_are_problems(story):
    api, _, _ = story

    unknown = api.get("auditor", "/v1/series/nowhere/dossier")
    bad_time = api.get("auditor", URL, params={"as_of": "March"})
    bad_period = api.get("auditor", URL, params={"target_from": "2023/03"})

    assert unknown.status_code == 404
    assert bad_time.status_code == 422 and "as_of" in bad_time.text
    assert bad_period.status_code == 422 and "target_from" in bad_period.text
    assert api.get(None, URL).status_code == 401


def test_the_cli_gives_the_same_dossier(story, capsys):
    api, moment, (first, _) = story
    store = ["--database-url", api.url]

    assert main(["dossier", SERIES.key, "--csv", *store]) == 0
    flat = capsys.readouterr().out
    assert main(["dossier", SERIES.key, "--as-of", moment.isoformat(), *store]) == 0
    text = capsys.readouterr().out
    assert main(["dossier", SERIES.key, "--as-of", "March", *store]) == 2
    error = capsys.readouterr().err

    served = api.get("auditor", URL, params={"format": "csv"}).text
    assert list(csv.reader(io.StringIO(flat))) == list(csv.reader(io.StringIO(served)))
    naive = api.get("auditor", URL).json()["champion_history"][0]
    assert f"champion: {naive['candidate']} [{NAIVE}]" in text
    assert "issued forecasts (1):" in text and f"#{first} " in text and "0/3 known" in text
    assert error.count("\n") == 1 and "--as-of 'March' is not an ISO 8601" in error


def test_the_ledger_and_monitoring_as_they_stood(story):
    api, moment, (first, second) = story
    then = {"as_of": moment.isoformat()}

    listed = api.get("auditor", "/v1/forecasts", params={"series_key": SERIES.key, **then})
    outcomes_then = api.get("auditor", f"/v1/forecasts/{first}/outcomes", params=then)
    outcomes_now = api.get("auditor", f"/v1/forecasts/{first}/outcomes")
    monitoring_then = api.get("auditor", "/v1/series/sales/north/monitoring", params=then)
    monitoring_now = api.get("auditor", "/v1/series/sales/north/monitoring")
    flags_then = api.get("auditor", "/v1/monitoring", params=then)

    assert [f["id"] for f in listed.json()["items"]] == [first]
    assert [f["id"] for f in api.get("auditor", "/v1/forecasts").json()["items"]] == [
        first, second]
    assert outcomes_then.json()["sets"] == [] and len(outcomes_now.json()["sets"]) == 1
    assert monitoring_then.json()["candidate_id"] == NAIVE  # the champion then
    assert monitoring_now.json()["candidate_id"] == DRIFT
    assert monitoring_then.json()["forecasts"] == 1
    assert {row["candidate_id"] for row in flags_then.json()["items"]} == {NAIVE}


def test_audit_subjects_are_given_in_words_beside_their_ids(story):
    api, _, (first, _) = story

    events = api.get("auditor", "/v1/audit/events").json()["items"]
    in_dossier = api.get("auditor", URL).json()["events"]

    words = {e["subject"]: e["subject_label"] for e in events}
    with api.sessions.begin() as session:
        north = session.scalar(select(SeriesRecord.id).where(SeriesRecord.key == SERIES.key))
        first_version = session.scalar(select(SeriesVersion.id).where(
            SeriesVersion.series_id == north, SeriesVersion.number == 1))
    assert words[f"series/{north}"] == "series sales/north"
    assert words[f"series_version/{first_version}"] == "series sales/north version 1"
    assert words[f"issued_forecast/{first}"] == f"issued forecast {first} of sales/north"
    assert words["champion_choice/2"] == "champion choice 2 of sales/north"
    assert words["run/1"] == "run 1"
    assert words[f"series_result/1/{first_version}"] == "run 1 results for sales/north version 1"
    assert words[f"candidate/{NAIVE}"] == 'candidate {"family":"benchmark","method":"naive"}'
    outcome = next(s for s in words if s.startswith(f"outcome_set/{first}/"))
    assert words[outcome] == (f"outcomes of forecast {first} (sales/north) against "
                              "sales/north version 2")
    assert any(w.startswith("API key ") for w in words.values())
    assert all(e["subject_label"] == words[e["subject"]] for e in in_dossier)


def test_champions_and_monitoring_carry_labels_beside_ids(story):
    api, _, _ = story
    labels = {c["id"]: c["label"] for c in api.get("reader", "/v1/runs/1").json()["candidates"]}

    champion = api.get("reader", "/v1/series/sales/north/champion").json()
    history = api.get("reader", "/v1/series/sales/north/champion/history",
                      params={"format": "csv"}).text
    monitored = api.get("reader", "/v1/series/sales/north/monitoring").json()
    flags = list(csv.DictReader(io.StringIO(
        api.get("reader", "/v1/monitoring", params={"format": "csv"}).text)))

    assert champion["candidate"] == labels[DRIFT]
    assert [(r["candidate_id"], r["candidate"]) for r in csv.DictReader(io.StringIO(history))
            ] == [(NAIVE, labels[NAIVE]), (DRIFT, labels[DRIFT])]
    assert monitored["candidate"] == labels[DRIFT]
    assert flags and {(r["candidate_id"], r["candidate"]) for r in flags} == {
        (DRIFT, labels[DRIFT])}
