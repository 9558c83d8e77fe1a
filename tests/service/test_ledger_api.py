"""The ledger over HTTP on SQLite and PostgreSQL: champions and their history, issuing
forecasts (once per set of inputs), outcomes scored against each version, monitoring."""

from __future__ import annotations

import csv
import io

import pytest

from backtest.candidates import parse_candidate
from backtest.ledger import issue_forecast
from backtest.series import make_series
from service.usecases.score_outcomes import score_due_outcomes
from storage.ledger import due_outcomes
from storage.series.versions import find_version, load_series
from tests.service.conftest import CANDIDATES, Api
from tests.storage.builders import monthly_series

SERIES = monthly_series("sales/north", 48, seed=3)
NAIVE, DRIFT = (parse_candidate(spec).id for spec in CANDIDATES)


@pytest.fixture
def backtested(any_api: Api) -> Api:
    """A series with a succeeded run (run 1) of the naive and drift benchmarks."""
    assert any_api.post_series(SERIES).status_code == 201
    run = any_api.submit([SERIES.key])
    any_api.complete(run.json()["id"])
    return any_api


def _choose(api: Api, candidate_id: str, reason: str = "best in run 1", run_id: int = 1):
    return api.post("submitter", "/v1/series/sales/north/champion",
                    json={"candidate_id": candidate_id, "run_id": run_id, "reason": reason})


def _issue(api: Api, **fields):
    return api.post("submitter", "/v1/forecasts",
                    json={"series_key": SERIES.key, "horizon": 3, **fields})


def _append(api: Api, *values: float, start: int = 48):
    labels = [SERIES.label(start + i) for i in range(len(values))]
    return api.post("submitter", "/v1/series/sales/north/observations", json={
        "observations": [{"period": p, "value": v} for p, v in zip(labels, values)]})


def test_choosing_champions_keeps_every_choice_and_the_latest_is_current(backtested: Api):
    before = backtested.get("reader", "/v1/series/sales/north/champion")
    first = _choose(backtested, NAIVE, "simplest that holds up")
    second = _choose(backtested, DRIFT, "trend matters")
    current = backtested.get("auditor", "/v1/series/sales/north/champion")
    history = backtested.get("auditor", "/v1/series/sales/north/champion/history")
    listed = backtested.get("reader", "/v1/champions", params={"format": "csv"})

    assert before.status_code == 404 and before.json()["code"] == "not_found"
    assert first.status_code == 201 and second.status_code == 201
    assert first.headers["Location"] == "/v1/series/sales/north/champion"
    assert current.json()["candidate_id"] == DRIFT
    assert [(c["candidate_id"], c["reason"], c["chosen_by"], c["run_id"])
            for c in history.json()["items"]] == [(NAIVE, "simplest that holds up",
                                                   "submitter", 1),
                                                  (DRIFT, "trend matters", "submitter", 1)]
    rows = list(csv.DictReader(io.StringIO(listed.text)))
    assert [(r["series_key"], r["candidate_id"]) for r in rows] == [("sales/north", DRIFT)]


@pytest.mark.parametrize(("body", "pointer"), [
    ({"candidate_id": "c0000000000000000", "run_id": 1, "reason": "x"}, None),
    ({"candidate_id": NAIVE, "run_id": 99, "reason": "x"}, "/run_id"),
    ({"candidate_id": NAIVE, "run_id": 1, "reason": ""}, "/reason"),
    ({"candidate_id": NAIVE, "reason": "x"}, "/run_id"),
])
def test_a_champion_must_be_justified_by_a_run_that_backtested_it(api: Api, body, pointer):
    assert api.post_series(SERIES).status_code == 201
    api.complete(api.submit([SERIES.key]).json()["id"])

    refused = api.post("submitter", "/v1/series/sales/north/champion", json=body)
    history = api.get("reader", "/v1/series/sales/north/champion/history")

    assert refused.status_code in (404, 409, 422)
    assert refused.headers["content-type"] == "application/problem+json"
    if pointer:
        assert refused.status_code == 422
        assert [e["pointer"] for e in refused.json()["errors"]] == [pointer]
    assert history.json()["items"] == []


def test_a_run_suggests_its_best_candidate_in_the_confidence_set(api: Api):
    api.post_series(SERIES)
    api.post_series(monthly_series("sales/south", 48, seed=4))
    result = api.complete(api.submit(["sales/north", "sales/south"]).json()["id"])

    answer = api.get("reader", "/v1/runs/1/champion-suggestions")

    expected = []
    for unit in result.series:
        in_set = [r for r in unit.ranking if r.in_confidence_set and r.rank is not None]
        best = min(in_set or [r for r in unit.ranking if r.rank is not None],
                   key=lambda r: r.rank)
        expected.append((unit.series["key"], best.candidate_id))
    assert [(s["series_key"], s["candidate_id"]) for s in answer.json()["items"]] == expected
    assert all(s["current_champion"] is None for s in answer.json()["items"])


def test_issuing_fits_the_champion_on_the_latest_version_and_records_it_once(backtested: Api):
    _choose(backtested, DRIFT)
    created = _issue(backtested, levels=[95, 80], seed=5)
    again = _issue(backtested, levels=[80, 95], seed=5)
    other_seed = _issue(backtested, levels=[80, 95], seed=6)
    named = _issue(backtested, candidate_id=NAIVE, version=1)
    read = backtested.get("auditor", created.headers["Location"])

    expected = issue_forecast(SERIES, parse_candidate(CANDIDATES[1]), horizon=3, seed=5)
    body = created.json()
    assert created.status_code == 201 and again.status_code == 200
    assert again.json() == body == read.json()
    assert created.headers["Location"] == body["url"] == f"/v1/forecasts/{body['id']}"
    assert other_seed.status_code == 201 and other_seed.json()["id"] != body["id"]
    assert named.status_code == 201 and named.json()["candidate_id"] == NAIVE
    assert (body["candidate_id"], body["series_version"], body["origin"], body["levels"]) == \
        (DRIFT, 1, "2022-12", [80, 95])
    assert [s["period"] for s in body["steps"]] == ["2023-01", "2023-02", "2023-03"]
    assert [s["point"] for s in body["steps"]] == pytest.approx(list(expected.point))
    assert [s["upper"]["95"] for s in body["steps"]] == pytest.approx(list(expected.upper[95]))
    assert body["fingerprint"] == SERIES.fingerprint()
    assert body["issued_by"] == "submitter" and body["software"]["numpy"]


def test_issuing_without_a_champion_or_for_an_unbacktested_candidate_is_refused(
        backtested: Api):
    no_champion = _issue(backtested)
    unknown = _issue(backtested, candidate_id="c0123456789abcdef")
    no_series = _issue(backtested, series_key="sales/nowhere", candidate_id=NAIVE)
    bad_levels = _issue(backtested, candidate_id=NAIVE, levels=[80, 80])

    for answer, pointer in ((no_champion, "/candidate_id"), (unknown, "/candidate_id"),
                            (no_series, "/series_key"), (bad_levels, "/levels")):
        assert answer.status_code == 422, answer.text
        assert [e["pointer"] for e in answer.json()["errors"]] == [pointer]
    assert backtested.get("reader", "/v1/forecasts").json()["items"] == []


def test_the_ledger_filters_by_series_candidate_time_and_horizon(backtested: Api):
    first = _issue(backtested, candidate_id=NAIVE).json()
    second = _issue(backtested, candidate_id=DRIFT, levels=[90]).json()

    def listed(**params) -> list[int]:
        answer = backtested.get("reader", "/v1/forecasts", params=params)
        return [item["id"] for item in answer.json()["items"]]

    assert listed() == [first["id"], second["id"]]
    assert listed(candidate_id=DRIFT) == [second["id"]]
    assert listed(series_key="sales/elsewhere") == []
    assert listed(issued_from=second["issued_at"]) == [second["id"]]
    assert listed(issued_to=second["issued_at"]) == [first["id"]]
    assert listed(limit=1) == [first["id"]]
    page = backtested.get("reader", "/v1/forecasts", params={"limit": 1})
    assert backtested.get("reader", page.json()["next"]).json()["items"][0]["id"] == \
        second["id"]
    flat = backtested.get("reader", "/v1/forecasts", params={"horizon": 2},
                          headers={"Accept": "text/csv"})
    rows = list(csv.DictReader(io.StringIO(flat.text)))
    assert [(int(r["forecast_id"]), r["horizon"], r["level"]) for r in rows] == [
        (first["id"], "2", "80"), (first["id"], "2", "95"), (second["id"], "2", "90")]
    assert float(rows[2]["upper"]) == pytest.approx(second["steps"][1]["upper"]["90"])


def test_new_actuals_are_scored_once_and_a_correction_is_a_new_set(backtested: Api):
    forecast = _issue(backtested, candidate_id=NAIVE).json()
    empty = backtested.get("reader", f"/v1/forecasts/{forecast['id']}/outcomes")
    assert _append(backtested, 130.0, 131.0).status_code == 201
    with backtested.sessions.begin() as session:
        due = due_outcomes(session)
    scored = score_due_outcomes(backtested.sessions, actor="worker-a")
    repeated = score_due_outcomes(backtested.sessions, actor="worker-b")
    first = backtested.get("auditor", f"/v1/forecasts/{forecast['id']}/outcomes").json()
    corrected = make_series(SERIES.key, "P1M", [
        *zip(SERIES.labels(), SERIES.values.tolist()), ("2023-01", 128.0), ("2023-02", 131.0)])
    assert backtested.post_series(corrected).json()["version"]["change"] == "revision"
    rescored = score_due_outcomes(backtested.sessions, actor="worker-a")
    every = backtested.get("auditor", f"/v1/forecasts/{forecast['id']}/outcomes",
                           params={"all": "true"}).json()
    flat = backtested.get("reader", f"/v1/forecasts/{forecast['id']}/outcomes",
                          params={"all": "true", "format": "csv"})

    assert empty.json()["sets"] == []
    assert [forecast_id for forecast_id, _ in due] == [forecast["id"]]
    assert (scored, repeated, rescored) == (1, 0, 1)
    [current] = first["sets"]
    assert current["series_version"] == 2 and current["current"]
    assert [(o["period"], o["actual"]) for o in current["outcomes"]] == [
        ("2023-01", 130.0), ("2023-02", 131.0)]
    naive = float(SERIES.values[-1])
    assert current["outcomes"][0]["error"] == pytest.approx(130.0 - naive)
    assert [(s["series_version"], s["current"], s["outcomes"][0]["actual"])
            for s in every["sets"]] == [(2, False, 130.0), (3, True, 128.0)]
    assert every["sets"][0] == {**current, "current": False}
    rows = list(csv.DictReader(io.StringIO(flat.text)))
    assert len(rows) == 2 * 2 * 2  # sets x observed steps x levels
    assert {r["hit"] for r in rows} <= {"True", "False"}


@pytest.mark.parametrize("method", ["PUT", "PATCH", "DELETE"])
def test_issued_forecasts_outcomes_and_champions_cannot_be_changed(backtested: Api, method):
    _choose(backtested, NAIVE)
    forecast = _issue(backtested).json()
    _append(backtested, 130.0)
    score_due_outcomes(backtested.sessions, actor="worker-a")
    urls = [forecast["url"], f"{forecast['url']}/outcomes", "/v1/forecasts",
            "/v1/series/sales/north/champion", "/v1/series/sales/north/champion/history",
            "/v1/champions"]
    before = [backtested.get("auditor", url).json() for url in urls]

    for url in urls:
        answer = backtested.request("admin", method, url, json={"reason": "rewrite"})
        assert answer.status_code == 405, (url, answer.text)
        assert answer.json()["code"] == "method_not_allowed"
    assert [backtested.get("auditor", url).json() for url in urls] == before


def test_monitoring_sets_outcomes_beside_the_backtest_and_flags_them(backtested: Api):
    _choose(backtested, NAIVE)
    idle = backtested.get("reader", "/v1/series/sales/north/monitoring").json()
    forecast = _issue(backtested).json()
    _append(backtested, 130.0, 125.0)
    score_due_outcomes(backtested.sessions, actor="worker-a")
    report = backtested.get("auditor", "/v1/series/sales/north/monitoring")
    table = backtested.get("reader", "/v1/monitoring", params={"format": "csv"})
    series_csv = backtested.get("reader", "/v1/series/sales/north/monitoring",
                                params={"format": "csv"})
    other = backtested.get("reader", "/v1/series/sales/north/monitoring",
                           params={"candidate_id": DRIFT})

    assert (idle["forecasts"], idle["realised"]) == (0, [])
    assert {f["state"] for f in idle["flags"]} == {"not_enough_data"}
    body = report.json()
    assert (body["candidate_id"], body["is_champion"], body["forecasts"]) == (NAIVE, True, 1)
    assert body["expectation"]["run_id"] == 1
    assert set(body["expectation"]["mase_by_horizon"]) == {"1", "2", "3"}
    stored = backtested.get("reader", "/v1/runs/1/scores", params={
        "metric": "mase", "candidate_id": NAIVE, "limit": 100}).json()["items"]
    by_horizon = {str(s["horizon"]): s["value"] for s in stored if s["horizon"] is not None}
    assert body["expectation"]["mase_by_horizon"] == pytest.approx(by_horizon, rel=1e-12)
    assert [p["period"] for p in body["realised"]] == ["2023-01", "2023-02"]
    naive = forecast["steps"][0]["point"]
    with backtested.sessions.begin() as session:
        scale = issue_forecast(load_series(session, find_version(
            session, SERIES.fingerprint()).id), parse_candidate(CANDIDATES[0]),
            horizon=1).scale
    assert body["realised"][0]["mase"] == pytest.approx(abs(130.0 - naive) / scale)
    assert {f["rule"] for f in body["flags"]} == {"coverage", "accuracy", "level_shift"}
    rows = list(csv.DictReader(io.StringIO(table.text)))
    assert {r["series_key"] for r in rows} == {"sales/north"}
    assert len(rows) == len(body["flags"])
    assert [r["period"] for r in csv.DictReader(io.StringIO(series_csv.text))] == [
        "2023-01", "2023-01", "2023-02", "2023-02"]
    assert (other.json()["is_champion"], other.json()["forecasts"]) == (False, 0)


def test_monitoring_a_series_without_champion_names_the_missing_candidate(backtested: Api):
    answer = backtested.get("reader", "/v1/series/sales/north/monitoring")

    assert answer.status_code == 422
    assert [e["pointer"] for e in answer.json()["errors"]] == ["/candidate_id"]


def test_the_flag_table_pages_by_series_and_the_pages_add_up_to_the_whole(any_api: Api):
    keys = ["costs/a", "costs/b", "sales/c"]
    for i, key in enumerate(keys):
        assert any_api.post_series(monthly_series(key, 48, seed=10 + i)).status_code == 201
    any_api.complete(any_api.submit(keys).json()["id"])
    for key in keys:
        chosen = any_api.post("submitter", f"/v1/series/{key}/champion",
                              json={"candidate_id": NAIVE, "run_id": 1, "reason": "paging"})
        assert chosen.status_code == 201, chosen.text
        issued = any_api.post("submitter", "/v1/forecasts", json={"series_key": key,
                                                                   "horizon": 3})
        assert issued.status_code == 201, issued.text
        added = any_api.post("submitter", f"/v1/series/{key}/observations", json={
            "observations": [{"period": "2023-01", "value": 130.0}]})
        assert added.status_code in (200, 201), added.text
    assert score_due_outcomes(any_api.sessions, actor="worker-a") == 3

    whole = any_api.get("reader", "/v1/monitoring").json()
    pages, url = [], "/v1/monitoring?limit=2"
    while url:
        answer = any_api.get("reader", url)
        pages.append(answer.json())
        url = answer.json()["next"]
        assert answer.headers.get("Link") == (None if url is None else f'<{url}>; rel="next"')
    costs = any_api.get("reader", "/v1/monitoring", params={"prefix": "costs/", "limit": 1})
    csv_page = any_api.get("reader", "/v1/monitoring", params={"format": "csv", "limit": 1})

    assert whole["next"] is None
    assert [sorted({r["series_key"] for r in p["items"]}) for p in pages] == [keys[:2], keys[2:]]
    assert [r for p in pages for r in p["items"]] == whole["items"]
    assert {r["series_key"] for r in costs.json()["items"]} == {"costs/a"}
    assert "prefix=costs" in costs.json()["next"] and "offset=1" in costs.json()["next"]
    assert {r["series_key"] for r in csv.DictReader(io.StringIO(csv_page.text))} == {"costs/a"}
    assert csv_page.headers["Link"].startswith("</v1/monitoring?")


def test_a_candidate_with_empirical_intervals_is_issued_with_them(any_api: Api):
    empirical = {**CANDIDATES[0], "intervals": {"kind": "empirical", "min_errors": 5}}
    candidate = parse_candidate(empirical)
    assert any_api.post_series(SERIES).status_code == 201
    run = any_api.submit([SERIES.key], candidates=[empirical],
                         plan={"horizon": 3, "max_origins": 12})
    result = any_api.complete(run.json()["id"])
    folds = [f for f in result.series[0].folds if f.candidate_id == candidate.id]

    created = _issue(any_api, candidate_id=candidate.id, levels=[80])
    expected = issue_forecast(SERIES, candidate, horizon=3, levels=(80,), backtest_folds=folds)
    own = issue_forecast(SERIES, parse_candidate(CANDIDATES[0]), horizon=3, levels=(80,))
    body = created.json()
    assert created.status_code == 201, body
    assert [s["upper"]["80"] for s in body["steps"]] == pytest.approx(list(expected.upper[80]))
    assert expected.upper[80] != own.upper[80]
    assert body["params"]["empirical.horizons"] == 3  # the record says what was issued
    assert body["candidate_spec"]["intervals"]["kind"] == "empirical"
