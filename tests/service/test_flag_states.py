"""Monitoring flags are three-valued everywhere: raised, clear, or not enough data (with
the one-step outcomes had and needed), so a rule that could not test never reads as an
all-clear. The series here has 3 one-step actuals, every one far outside the intervals."""

from __future__ import annotations

import csv
import io

import pytest

from service.cli.main import main
from service.usecases.monitoring import monitor_series
from service.usecases.score_outcomes import score_due_outcomes
from service.views.pages.ledger_section import ledger_section
from service.views.pages.ledger_view import load_ledger
from tests.service.conftest import Api
from tests.storage.builders import monthly_series

SERIES = monthly_series("sales/north", 48, seed=3)
UNTESTED = {("coverage", 80): 12, ("coverage", 95): 12, ("accuracy", None): 6,
            ("level_shift", None): 6}


@pytest.fixture
def missed(any_api: Api) -> Api:
    """Naive as champion; three monthly forecasts whose one-step actuals are 10x the level."""
    assert any_api.post_series(SERIES).status_code == 201
    any_api.complete(any_api.submit([SERIES.key]).json()["id"])
    ranking = any_api.get("reader", "/v1/runs/1/ranking").json()["items"]
    naive = next(r["candidate_id"] for r in ranking if r["candidate"].lower() == "naive")
    assert any_api.post("submitter", "/v1/series/sales/north/champion", json={
        "candidate_id": naive, "run_id": 1, "reason": "flags"}).status_code == 201
    for k in range(3):
        assert any_api.post("submitter", "/v1/forecasts", json={
            "series_key": SERIES.key, "horizon": 1}).status_code == 201
        assert any_api.post("submitter", "/v1/series/sales/north/observations", json={
            "observations": [{"period": SERIES.label(48 + k), "value": 1500.0}]}
        ).status_code == 201
        assert score_due_outcomes(any_api.sessions, actor="worker-a") >= 1
    return any_api


def test_rules_with_too_little_data_say_so_in_json_and_csv(missed: Api):
    report = missed.get("reader", "/v1/series/sales/north/monitoring").json()
    table = missed.get("reader", "/v1/monitoring", params={"format": "csv"})
    raised = missed.get("reader", "/v1/monitoring", params={"state": "raised"}).json()
    untested = missed.get("reader", "/v1/monitoring", params={"state": "not_enough_data"})
    bad = missed.get("reader", "/v1/monitoring", params={"state": "quiet"})

    assert {(f["rule"], f["level"]): (f["state"], f["outcomes"], f["needed"])
            for f in report["flags"]} == {key: ("not_enough_data", 3, needed)
                                          for key, needed in UNTESTED.items()}
    assert report["raised"] == [] and sorted(report["not_enough_data"]) == [
        "accuracy", "coverage", "coverage", "level_shift"]
    rows = list(csv.DictReader(io.StringIO(table.text)))
    assert {(r["rule"], r["level"], r["state"], r["outcomes"], r["needed"]) for r in rows} == {
        (rule, "" if level is None else str(level), "not_enough_data", "3", str(needed))
        for (rule, level), needed in UNTESTED.items()}
    assert "raised" not in rows[0]
    assert raised["items"] == []
    assert len(untested.json()["items"]) == 4
    assert bad.status_code == 422 and bad.json()["errors"][0]["pointer"] == "/state"


def test_a_champion_never_issued_is_untested_not_absent(any_api: Api):
    assert any_api.post_series(SERIES).status_code == 201
    any_api.complete(any_api.submit([SERIES.key]).json()["id"])
    naive = any_api.get("reader", "/v1/runs/1/ranking").json()["items"][0]["candidate_id"]
    assert any_api.post("submitter", "/v1/series/sales/north/champion", json={
        "candidate_id": naive, "run_id": 1, "reason": "idle"}).status_code == 201

    rows = any_api.get("reader", "/v1/monitoring").json()["items"]

    assert [(r["rule"], r["state"], r["outcomes"], r["needed"]) for r in rows] == [
        ("coverage", "not_enough_data", 0, 12), ("accuracy", "not_enough_data", 0, 6),
        ("level_shift", "not_enough_data", 0, 6)]


def test_the_command_line_and_the_page_show_not_enough_data_with_the_counts(
        missed: Api, capsys: pytest.CaptureFixture[str]):
    assert main(["monitor", "sales/north", "--database-url", missed.url]) == 0
    printed = capsys.readouterr().out
    with missed.sessions() as session:
        page = ledger_section(load_ledger(session, SERIES.key))
        assert all(f.state == "not_enough_data"
                   for f in monitor_series(session, SERIES.key).report.flags)

    for line in ("  not enough data (3 of 12)  coverage 80%:",
                 "  not enough data (3 of 12)  coverage 95%:",
                 "  not enough data (3 of 6)  accuracy:",
                 "  not enough data (3 of 6)  level_shift:"):
        assert line in printed
    assert "quiet" not in printed and "RAISED" not in printed
    flags = page[page.index('class="flags"'):]
    assert flags.count("not enough data (3 of 12)") == 2
    assert flags.count("not enough data (3 of 6)") == 2
    assert "quiet" not in page
