"""The BI views on SQLite and PostgreSQL equal the API's CSV for the same store, and the
PostgreSQL BI role reads those views and nothing else."""

from __future__ import annotations

import csv
import io
import uuid
from datetime import UTC, datetime

import pytest
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import ProgrammingError

from backtest.candidates import parse_candidate
from service.cli.main import main
from service.usecases.score_outcomes import score_due_outcomes
from storage.db import BI_VIEWS, make_engine
from tests.service.conftest import CANDIDATES, Api
from tests.storage.builders import monthly_series

NAIVE, DRIFT = (parse_candidate(spec).id for spec in CANDIDATES)


@pytest.fixture
def filled(any_api: Api) -> Api:
    """Two series with two runs, champions, issued forecasts and one scored outcome set."""
    api = any_api
    for key, seed in (("north", 1), ("south", 2)):
        api.post_series(monthly_series(key, 48, seed=seed))
    api.complete(api.submit(["north", "south"]).json()["id"])
    api.complete(api.submit(["north"], plan={"horizon": 3, "max_origins": 5,
                                             "levels": [80, 95]}).json()["id"])
    for key, candidate in (("north", NAIVE), ("south", DRIFT), ("north", DRIFT)):
        api.post("submitter", f"/v1/series/{key}/champion",
                 json={"candidate_id": candidate, "run_id": 1, "reason": "test"})
    for key in ("north", "south"):
        api.post("submitter", "/v1/forecasts", json={"series_key": key, "horizon": 3})
    api.post("submitter", "/v1/series/north/observations",
             json={"observations": [{"period": "2023-01", "value": 130.0}]})
    score_due_outcomes(api.sessions, actor="worker-test")
    return api


def _cell(value: object) -> object:
    """One cell compared across SQL and CSV: numbers and booleans as floats, times aware."""
    if value is None or value == "":
        return None
    if isinstance(value, bool | int | float):
        return float(value)
    if isinstance(value, datetime):
        return value if value.tzinfo else value.replace(tzinfo=UTC)
    text_value = str(value)
    if text_value in ("True", "False"):
        return float(text_value == "True")
    try:
        return float(text_value)
    except ValueError:
        pass
    if ":" in text_value:
        moment = datetime.fromisoformat(text_value)
        return moment if moment.tzinfo else moment.replace(tzinfo=UTC)
    return text_value


def _from_csv(api: Api, url: str, columns: list[str], **params: str) -> list[tuple]:
    answer = api.get("auditor", url, params={"format": "csv", **params})
    assert answer.status_code == 200, answer.text
    return sorted((tuple(_cell(row[c]) for c in columns)
                   for row in csv.DictReader(io.StringIO(answer.text))), key=repr)


def _from_view(api: Api, query: str, columns: list[str]) -> list[tuple]:
    engine = make_engine(api.url)
    try:
        with engine.connect() as connection:
            rows = connection.execute(text(query)).mappings().all()
    finally:
        engine.dispose()
    return sorted((tuple(_cell(row[c]) for c in columns) for row in rows), key=repr)


RANKING = ["series_key", "series_version", "run_id", "run_finished_at", "metric", "horizon",
           "level", "rank", "candidate_id", "candidate", "is_benchmark", "value", "count", "note"]


@pytest.mark.parametrize(("params", "where"), [
    ({}, "metric = 'mase' AND horizon IS NULL AND level IS NULL"),
    ({"metric": "rmsse", "horizon": "2"}, "metric = 'rmsse' AND horizon = 2 AND level IS NULL"),
    ({"metric": "winkler", "level": "95"}, "metric = 'winkler' AND horizon IS NULL AND level = 95"),
])
def test_the_ranking_view_equals_the_rankings_csv(filled: Api, params, where):
    view = _from_view(filled, f"SELECT * FROM bi_latest_ranking WHERE {where}", RANKING)

    assert view and view == _from_csv(filled, "/v1/rankings", RANKING, **params)
    assert {row[2] for row in view} == {1.0, 2.0}  # north from run 2, south from run 1


def test_the_scores_view_equals_each_runs_scores_csv(filled: Api):
    columns = ["run_id", "series_key", "series_version", "candidate_id", "candidate",
               "horizon", "metric", "level", "value", "count", "note"]
    for run_id in (1, 2):
        view = _from_view(filled, f"SELECT * FROM bi_scores WHERE run_id = {run_id}", columns)

        assert view and view == _from_csv(filled, f"/v1/runs/{run_id}/scores", columns)


def test_the_champions_view_equals_the_champions_csv(filled: Api):
    columns = ["series_key", "choice_id", "candidate_id", "run_id", "reason", "chosen_by",
               "chosen_at"]
    view = _from_view(filled, "SELECT * FROM bi_champions", columns)

    assert view == _from_csv(filled, "/v1/champions", columns)
    assert [(row[0], row[2]) for row in view] == [("north", DRIFT), ("south", DRIFT)]


def test_the_issued_forecasts_view_equals_the_ledger_and_its_outcomes(filled: Api):
    ledger = ["forecast_id", "series_key", "series_version", "candidate_id", "candidate",
              "issued_at", "issued_by", "origin", "horizon", "period", "point", "level",
              "lower", "upper"]
    scored = ["forecast_id", "series_version", "horizon", "period", "actual", "error",
              "scaled_error", "level", "hit", "interval_score"]
    view = _from_view(filled, "SELECT * FROM bi_issued_forecasts", ledger)
    outcomes = _from_view(filled, "SELECT forecast_id, scored_on_version AS series_version, "
                          "horizon, period, actual, error, scaled_error, level, hit, "
                          "interval_score FROM bi_issued_forecasts WHERE actual IS NOT NULL",
                          scored)

    assert view == _from_csv(filled, "/v1/forecasts", ledger)
    assert len(outcomes) == 2  # one target period known, at two levels
    assert outcomes == _from_csv(filled, "/v1/forecasts/1/outcomes", scored)


def test_every_listed_view_exists(filled: Api):
    for view in BI_VIEWS:
        assert _from_view(filled, f"SELECT * FROM {view}", []) != []


@pytest.mark.postgres
def test_the_bi_role_reads_the_views_and_nothing_else(tmp_path, capsys):
    from tests.storage.conftest import migrated_store
    role = f"bi_test_{uuid.uuid4().hex[:10]}"
    with migrated_store("postgresql", tmp_path) as url:
        admin = create_engine(url)
        try:
            assert main(["db", "bi-reader", role, "--database-url", url]) == 0
            assert f"role {role} created without login" in capsys.readouterr().out
            assert main(["db", "bi-reader", role, "--database-url", url]) == 0
            assert "already existed" in capsys.readouterr().out
            with admin.begin() as connection:
                connection.execute(text(f'ALTER ROLE "{role}" LOGIN'))
            reader = create_engine(make_url(url).set(username=role))
            try:
                with reader.connect() as connection:
                    for view in BI_VIEWS:
                        connection.execute(text(f"SELECT * FROM {view}")).all()
                for statement in ("SELECT * FROM score", "SELECT * FROM api_key",
                                  "INSERT INTO plan VALUES ('x', '{}', now())",
                                  "UPDATE series SET unit = 'x'", "CREATE TABLE stolen (x int)"):
                    with reader.connect() as connection, pytest.raises(ProgrammingError,
                                                                       match="permission"):
                        connection.execute(text(statement))
            finally:
                reader.dispose()
        finally:
            with admin.begin() as connection:
                connection.execute(text(f'DROP OWNED BY "{role}"'))
                connection.execute(text(f'DROP ROLE "{role}"'))
            admin.dispose()


def test_on_sqlite_the_command_says_how_to_read_only(api: Api, capsys):
    assert main(["db", "bi-reader", "bi_sqlite", "--database-url", api.url]) == 2
    assert "open the store file read-only" in capsys.readouterr().err
