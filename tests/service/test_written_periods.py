"""A CSV upload keeps what the user wrote, on SQLite and PostgreSQL: quarter, ISO week and
month labels come back exactly in every output (series, results, ledger, dossier, the
command line, the report and the pages), the unit set in the file or as a parameter is on
the charts, unsorted rows are sorted, duplicates are refused with their file lines, and a
missing frequency names the parameter and the column to add."""

from __future__ import annotations

import csv
import io
import re

import pytest

from service.cli.main import main
from service.usecases.score_outcomes import score_due_outcomes
from service.views.pages.session import COOKIE
from tests.service.conftest import Api
from tests.service.test_pages import sign_in

QUARTERS = [f"{2018 + i // 4}-Q{i % 4 + 1}" for i in range(20)]  # 2018-Q1 .. 2022-Q4
WEEKS = [f"2021-W{w:02d}" for w in range(1, 53)] + ["2022-W01", "2022-W02"]
MONTHS = [f"{2019 + i // 12}-{i % 12 + 1:02d}" for i in range(36)]
QUARTER_LABEL = re.compile(r"^\d{4}-Q[1-4]$")
KEY = "sales/quarterly"


def _value(i: int) -> float:
    return round(100 + 3 * i + 8 * ((i % 4) == 3) - 5 * ((i % 4) == 0), 2)


def _upload_csv() -> str:
    """Quarterly rows newest first with a unit column; weekly and monthly rows shuffled."""
    rows = ["series_key,period,value,frequency,season_length,unit"]
    rows += [f"{KEY},{q},{_value(i)},P3M,4,EUR" for i, q in reversed(list(enumerate(QUARTERS)))]
    order = sorted(range(len(WEEKS)), key=lambda i: (i * 17) % len(WEEKS))
    rows += [f"visits/weekly,{WEEKS[i]},{50 + i % 7},P1W,4," for i in order]
    rows += [f"power/monthly,{MONTHS[i]},{200 + i},P1M,12,"
             for i in sorted(range(36), key=lambda i: (i * 7) % 36)]
    return "\n".join(rows) + "\n"


def _upload(api: Api, text: str, **params: str):
    return api.post("submitter", "/v1/series/upload", content=text, params=params,
                    headers={"Content-Type": "text/csv"})


def _csv_rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


@pytest.fixture
def story(any_api: Api) -> tuple[Api, int, int]:
    """The upload, a finished run on the quarterly series, its champion, a forecast issued
    on version 1, then two actuals appended (version 2) and scored."""
    api = any_api
    assert _upload(api, _upload_csv()).status_code == 201
    run_id = api.submit([KEY], plan={"horizon": 4, "max_origins": 3}).json()["id"]
    naive = api.complete(run_id).series[0].candidates[0].candidate_id
    assert api.post("submitter", f"/v1/series/{KEY}/champion", json={
        "run_id": run_id, "candidate_id": naive, "reason": "plain"}).status_code == 201
    issued = api.post("submitter", "/v1/forecasts", json={"series_key": KEY, "horizon": 4})
    assert issued.status_code == 201, issued.text
    appended = api.post("submitter", f"/v1/series/{KEY}/observations", json={"observations": [
        {"period": "2023-Q1", "value": 160.0}, {"period": "2023-Q2", "value": 171.0}]})
    assert appended.status_code == 201, appended.text
    score_due_outcomes(api.sessions, actor="worker-test")
    return api, run_id, issued.json()["id"]


def test_stored_periods_come_back_as_written_and_sorted(story):
    api, _, _ = story
    versions = {key: api.get("reader", f"/v1/series/{key}/versions/1").json()
                for key in (KEY, "visits/weekly", "power/monthly")}
    assert [o["period"] for o in versions[KEY]["observations"]] == QUARTERS
    assert [o["value"] for o in versions[KEY]["observations"]] == [
        _value(i) for i in range(len(QUARTERS))]
    assert [o["period"] for o in versions["visits/weekly"]["observations"]] == WEEKS
    assert [o["period"] for o in versions["power/monthly"]["observations"]] == MONTHS
    second = api.get("reader", f"/v1/series/{KEY}/versions/2").json()
    assert [o["period"] for o in second["observations"]][-3:] == ["2022-Q4", "2023-Q1",
                                                                  "2023-Q2"]
    listed = {row["key"]: row for row in _csv_rows(api.get(
        "reader", "/v1/series", params={"format": "csv"}).text)}
    assert listed[KEY]["latest_version_first_period"] == "2018-Q1"
    assert listed["visits/weekly"]["latest_version_last_period"] == "2022-W02"
    assert listed[KEY]["unit"] == "EUR" and listed["power/monthly"]["unit"] == ""


def test_results_ledger_outcomes_and_dossier_keep_the_quarters(story):
    api, run_id, forecast_id = story
    folds = _csv_rows(api.get("reader", f"/v1/runs/{run_id}/folds",
                              params={"format": "csv"}).text)
    assert folds and all(QUARTER_LABEL.match(row[name]) for row in folds
                         for name in ("origin", "train_start", "period"))
    assert folds[-1]["period"] == "2022-Q4"
    forecast = api.get("reader", f"/v1/forecasts/{forecast_id}").json()
    assert forecast["origin"] == "2022-Q4"
    assert [s["period"] for s in forecast["steps"]] == ["2023-Q1", "2023-Q2", "2023-Q3",
                                                        "2023-Q4"]
    ledger = _csv_rows(api.get("reader", "/v1/forecasts", params={"format": "csv"}).text)
    assert {row["period"] for row in ledger} == {"2023-Q1", "2023-Q2", "2023-Q3", "2023-Q4"}
    outcomes = api.get("reader", f"/v1/forecasts/{forecast_id}/outcomes").json()
    assert [o["period"] for o in outcomes["sets"][0]["outcomes"]] == ["2023-Q1", "2023-Q2"]
    url = f"/v1/series/{KEY}/dossier"
    dossier = api.get("auditor", url, params={"target_from": "2023-Q2"}).json()
    assert [f["forecast_id"] for f in dossier["forecasts"]] == [forecast_id]
    assert dossier["unit"] == "EUR"
    # the window compares periods, not text: the month that starts a quarter is that quarter
    same = api.get("auditor", url, params={"target_from": "2023-04", "target_to": "2023-06"})
    assert [f["forecast_id"] for f in same.json()["forecasts"]] == [forecast_id]
    after = api.get("auditor", url, params={"target_from": "2024-Q1"}).json()
    assert after["forecasts"] == []
    steps = _csv_rows(api.get("auditor", url, params={"format": "csv"}).text)
    assert [row["period"] for row in steps] == ["2023-Q1", "2023-Q2", "2023-Q3", "2023-Q4"]
    assert [row["actual"] for row in steps] == ["160.0", "171.0", "", ""]


def test_the_command_line_prints_the_quarters(story, capsys):
    api, _, forecast_id = story
    store = ["--database-url", api.url]
    assert main(["forecast", "show", str(forecast_id), *store]) == 0
    shown = capsys.readouterr().out
    assert "2023-Q1" in shown and "2022-Q4" in shown and "2023-01" not in shown
    assert main(["forecast", "list", "--csv", *store]) == 0
    listed = _csv_rows(capsys.readouterr().out)
    assert [row["period"] for row in listed] == [
        row["period"] for row in _csv_rows(api.get("reader", "/v1/forecasts",
                                                   params={"format": "csv"}).text)]
    assert main(["dossier", KEY, "--target-from", "2023-Q3", *store]) == 0
    text = capsys.readouterr().out
    assert "origin 2022-Q4" in text and "2018-Q1..2022-Q4" in text and "2018-01" not in text


def test_an_append_conflict_names_the_period(story):
    api, _, _ = story
    answer = api.post("submitter", f"/v1/series/{KEY}/observations", json={"observations": [
        {"period": "2023-Q3", "value": 1.0}, {"period": "2022-Q4", "value": 999.0}]})
    assert answer.status_code == 409
    detail = answer.json()["detail"]
    assert f"series '{KEY}': period 2022-Q4 is stored as {_value(19):g}" in detail
    assert "999" in detail and "observation 0" not in detail
    assert answer.headers["content-type"] == "application/problem+json"
    versions = api.get("reader", f"/v1/series/{KEY}").json()["versions"]
    assert len(versions) == 2  # nothing stored


def test_the_unit_parameter_applies_to_series_without_a_unit_column(any_api: Api):
    text = "series_key,period,value,unit\na,2020-Q1,1,\na,2020-Q2,2,\nb,2020-Q1,3,kWh\n" \
           "b,2020-Q2,4,kWh\n"
    assert _upload(any_api, text, frequency="P3M", unit="t CO2e").status_code == 201
    units = {key: any_api.get("reader", f"/v1/series/{key}").json()["unit"] for key in "ab"}
    assert units == {"a": "t CO2e", "b": "kWh"}


@pytest.mark.parametrize(("text", "params", "message"), [
    ("series_key,period,value\nx,2020-Q2,1\nx,2020-Q1,2\ny,2020-Q1,5\nx,2020-Q2,3\n",
     {"frequency": "P3M"}, "series 'x': period '2020-Q2' appears twice (line 2 and line 5)"),
    ("series_key,period,value\nx,2020-Q1,1\nx,2020-Q2,two\n", {"frequency": "P3M"},
     "series 'x', line 3: value 'two' is not a number"),
    ("series_key,period,value\nx,2020-Q1,1\ny,2020-Q1,1\n", {},
     "series 'x', line 2: no frequency; add a frequency column (an ISO 8601 duration such as "
     "P1M, P3M, P1W) or add the frequency query parameter (e.g. ?frequency=P1M) for the "
     "whole file"),
    ("series_key,period,value,frequency\nx,2020-Q1,1,P3M\nx,2020-Q1,2,P1M\n", {},
     "series 'x', line 3: frequency 'P1M' differs from 'P3M' given earlier (line 2)"),
    ("series_key,period,value,frequency\nx,2020-W01,1,P1W\nx,2020-W03,1,P1W\n", {},
     "series 'x': 1 period(s) missing: 2020-W02"),
])
def test_upload_errors_name_the_line_and_the_series(any_api: Api, text, params, message):
    answer = _upload(any_api, text, **params)
    assert answer.status_code == 422
    assert answer.headers["content-type"] == "application/problem+json"
    assert message in answer.json()["detail"]
    assert "row " not in answer.json()["detail"]
    assert any_api.get("reader", "/v1/series").json()["items"] == []


def test_the_report_and_the_pages_show_the_quarters_and_the_unit(api: Api):
    """The rendering does not depend on the database; SQLite only."""
    assert _upload(api, _upload_csv()).status_code == 201
    run_id = api.submit([KEY], plan={"horizon": 4, "max_origins": 3}).json()["id"]
    api.complete(run_id)
    report = api.get("reader", f"/v1/runs/{run_id}/report")
    assert report.status_code == 200
    assert "2022-Q4" in report.text and "value (EUR)" in report.text
    assert "series units" not in report.text
    assert not re.search(r">20(18|19|20|21|22)-(01|04|07|10)<", report.text)
    signed = sign_in(api, api.tokens["reader"])
    cookie = re.match(rf"{COOKIE}=([^;]+)", signed.headers["set-cookie"])[1]
    api.client.cookies.clear()
    page = api.client.get(f"/pages/series/{KEY}", headers={"Cookie": f"{COOKIE}={cookie}"})
    assert page.status_code == 200
    assert "2018-Q1" in page.text and "2022-Q4" in page.text and "value (EUR)" in page.text
