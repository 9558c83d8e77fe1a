"""Date and time parameters: ISO 8601 dates and zone-less times (read as UTC) are accepted
everywhere, anything else is a 422 problem (or one CLI line) naming the parameter."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from service.cli.main import main
from service.errors import InvalidInputError
from service.moments import point_in_time
from tests.service.conftest import Api
from tests.storage.builders import monthly_series

SERIES = monthly_series("sales/north", 48, seed=3)


@pytest.mark.parametrize(("text", "moment"), [
    ("2026-12-03", datetime(2026, 12, 3, tzinfo=UTC)),
    ("20261203", datetime(2026, 12, 3, tzinfo=UTC)),
    ("2026-W49-4", datetime(2026, 12, 3, tzinfo=UTC)),
    ("2026-12-03T09:30", datetime(2026, 12, 3, 9, 30, tzinfo=UTC)),
    (" 2026-12-03 09:30:15.5 ", datetime(2026, 12, 3, 9, 30, 15, 500000, tzinfo=UTC)),
    ("2026-12-03T10:30+01:00", datetime(2026, 12, 3, 9, 30, tzinfo=UTC)),
    ("2026-12-03T09:30:00Z", datetime(2026, 12, 3, 9, 30, tzinfo=UTC)),
])
def test_iso_dates_and_times_are_read_as_utc(text, moment):
    parsed = point_in_time("t", text)
    assert parsed == moment and parsed.utcoffset() == timedelta(0)


def test_as_of_reads_a_date_as_the_end_of_that_day():
    assert point_in_time("as_of", "2026-12-03", day_end=True) == datetime(
        2026, 12, 3, 23, 59, 59, 999999, tzinfo=UTC)


@pytest.mark.parametrize("text", ["yesterday", "2026-13-01", "1764720000", "",
                                  "0001-01-01T00:00+05:00"])
def test_anything_else_is_refused_naming_the_parameter_and_the_value(text):
    with pytest.raises(InvalidInputError) as refused:
        point_in_time("issued_from", text)
    assert refused.value.detail.startswith(f"issued_from {text!r} is not an ISO 8601 date")
    assert [(e.location, e.pointer) for e in refused.value.errors] == [("query", "/issued_from")]


@pytest.fixture
def issued(any_api: Api) -> Api:
    """One forecast issued now (naive's, the champion)."""
    assert any_api.post_series(SERIES).status_code == 201
    any_api.complete(any_api.submit([SERIES.key]).json()["id"])
    naive = any_api.get("reader", "/v1/runs/1/ranking").json()["items"]
    naive = next(r["candidate_id"] for r in naive if r["candidate"].lower().startswith("naive"))
    assert any_api.post("submitter", "/v1/series/sales/north/champion", json={
        "candidate_id": naive, "run_id": 1, "reason": "dates"}).status_code == 201
    assert any_api.post("submitter", "/v1/forecasts", json={
        "series_key": SERIES.key, "horizon": 2}).status_code == 201
    return any_api


def _ids(api: Api, url: str, **params: str) -> list[int]:
    answer = api.get("auditor", url, params=params)
    assert answer.status_code == 200, answer.text
    return [item.get("id", item.get("seq")) for item in answer.json()["items"]]


def test_ledger_and_audit_log_take_dates_and_zone_less_times(issued: Api):
    today = datetime.now(UTC).date()
    tomorrow = today + timedelta(days=1)

    assert _ids(issued, "/v1/forecasts", issued_from=today.isoformat()) == [1]
    assert _ids(issued, "/v1/forecasts", issued_from=tomorrow.isoformat()) == []
    assert _ids(issued, "/v1/forecasts", issued_from=f"{tomorrow:%Y%m%d}") == []
    assert _ids(issued, "/v1/forecasts", issued_to=f"{today}T00:00:00") == []
    assert _ids(issued, "/v1/forecasts", issued_from=f"{today}T00:00",
                issued_to=tomorrow.isoformat()) == [1]
    events = _ids(issued, "/v1/audit/events", start=today.isoformat())
    assert events and events == _ids(issued, "/v1/audit/events", start=f"{today}T00:00+00:00",
                                     end=f"{tomorrow}")
    assert _ids(issued, "/v1/audit/events", end=today.isoformat()) == []


@pytest.mark.parametrize(("url", "name"), [("/v1/forecasts", "issued_from"),
                                           ("/v1/forecasts", "issued_to"),
                                           ("/v1/audit/events", "start"),
                                           ("/v1/audit/events", "end")])
@pytest.mark.parametrize("value", ["2026-02-30", "next week", "1764720000"])
def test_a_bad_time_is_a_422_problem_naming_the_parameter(api: Api, url, name, value):
    answer = api.get("auditor", url, params={name: value})

    assert answer.status_code == 422, answer.text
    body = answer.json()
    assert answer.headers["content-type"].startswith("application/problem+json")
    assert [(e["location"], e["pointer"]) for e in body["errors"]] == [("query", f"/{name}")]
    assert f"{name} {value!r} is not an ISO 8601 date" in body["detail"]


def test_the_command_line_takes_a_date_and_refuses_a_bad_one_in_one_line(
        issued: Api, capsys: pytest.CaptureFixture[str]):
    today = datetime.now(UTC).date()
    store = ["--database-url", issued.url]

    assert main(["forecast", "list", "--from", today.isoformat(), *store]) == 0
    listed = capsys.readouterr()
    assert main(["forecast", "list", "--to", today.isoformat(), *store]) == 0
    none = capsys.readouterr()
    assert main(["forecast", "list", "--from", "2025-03-32", *store]) == 2
    refused = capsys.readouterr()

    assert listed.out.startswith("forecast 1: sales/north") and listed.err == ""
    assert none.out.strip() == "no forecasts issued"
    assert refused.out == "" and refused.err.splitlines() == [
        "foldline: error: --from '2025-03-32' is not an ISO 8601 date or time in the years 1 "
        "to 9999 (e.g. 2025-03-31 or 2025-03-31T17:00:00Z)"]
