"""One rule for formats and query parameters on every GET of the API, walked from the
OpenAPI document: a table answers CSV to ``format=csv`` and to ``Accept: text/csv``; an
unknown format, score name or query parameter is a 422 problem naming it."""

from __future__ import annotations

import re

import pytest

from backtest.candidates import parse_candidate
from tests.service.conftest import CANDIDATES, Api, copied_store, serving
from tests.storage.builders import monthly_series

NAIVE = parse_candidate(CANDIDATES[0]).id
ROLES = ("reader", "auditor", "admin")
REQUIRED = {"series_key": "a", "candidate_id": NAIVE, "version": "1"}


@pytest.fixture(scope="module")
def walked(sqlite_template, tmp_path_factory) -> tuple[Api, list[tuple[str, str, bool, set]]]:
    """A store with a series, a finished run, a champion and an issued forecast; and every
    GET of the API as (template, URL, is it a table, its query parameters)."""
    directory = tmp_path_factory.mktemp("walk")
    with serving(copied_store(sqlite_template, directory)) as api:
        api.post_series(monthly_series("a", seed=1))
        api.complete(api.submit(["a"]).json()["id"])
        api.post("submitter", "/v1/series/a/champion",
                 json={"candidate_id": NAIVE, "run_id": 1, "reason": "best"})
        api.post("submitter", "/v1/forecasts", json={"series_key": "a", "horizon": 2})
        key_id = api.get("admin", "/v1/keys").json()["items"][0]["id"]
        values = {"key": "a", "run_id": "1", "number": "1", "forecast_id": "1",
                  "key_id": key_id}
        gets = []
        for path, operations in api.app.openapi()["paths"].items():
            operation = operations.get("get")
            if operation is None or not path.startswith("/v1/"):
                continue
            url = re.sub(r"\{(\w+)\}", lambda m: values[m.group(1)], path)
            query = {p["name"] for p in operation.get("parameters", []) if p["in"] == "query"}
            table = "text/csv" in str(operation["responses"].get("200", {}))
            gets.append((path, url, table, query))
        yield api, gets


def _get(api: Api, url: str, query: set, **options):
    """The answer of the first role allowed to read ``url``, with required values filled."""
    params = {name: REQUIRED[name] for name in query & REQUIRED.keys()}
    params.update(options.pop("params", {}))
    for role in ROLES:
        answer = api.get(role, url, params=params, **options)
        if answer.status_code != 403:
            return answer
    raise AssertionError(f"no role may read {url}")


def test_the_walk_covers_the_tables_auditors_and_bi_tools_read(walked):
    _, gets = walked
    tables = {path for path, _, table, _ in gets if table}

    assert {"/v1/series", "/v1/runs", "/v1/audit/events", "/v1/history/scores",
            "/v1/history/version-runs", "/v1/keys", "/v1/rankings", "/v1/champions",
            "/v1/forecasts", "/v1/monitoring", "/v1/series/{key}/dossier"} <= tables


def test_every_table_answers_csv_to_the_parameter_and_to_the_accept_header(walked):
    api, gets = walked
    for path, url, table, query in gets:
        if not table:
            continue
        by_param = _get(api, url, query, params={"format": "csv"})
        by_header = _get(api, url, query, headers={"Accept": "text/csv"})
        as_json = _get(api, url, query, params={"format": "json"})

        assert by_param.status_code == 200, (path, by_param.text)
        assert by_param.headers["content-type"].startswith("text/csv"), path
        assert by_header.headers["content-type"].startswith("text/csv"), path
        assert by_header.text == by_param.text, path
        assert as_json.headers["content-type"].startswith("application/json"), path
        header = by_param.text.splitlines()[0]
        assert "," in header and "{" not in header, (path, header)


def test_an_unknown_format_is_a_422_naming_it(walked):
    api, gets = walked
    for path, url, table, query in gets:
        if not table:
            continue
        answer = _get(api, url, query, params={"format": "xml"})

        assert answer.status_code == 422, path
        assert answer.headers["content-type"] == "application/problem+json"
        assert [e["pointer"] for e in answer.json()["errors"]] == ["/format"], path


def test_an_unknown_query_parameter_is_a_422_naming_it_on_every_get(walked):
    api, gets = walked
    for path, url, _, query in gets:
        answer = _get(api, url, query, params={"colour": "blue"})

        assert answer.status_code == 422, (path, answer.status_code)
        assert "colour" in answer.json()["detail"], path
        assert [e["pointer"] for e in answer.json()["errors"]] == ["/colour"], path


def test_an_unknown_score_name_is_a_422(walked):
    api, gets = walked
    with_metric = [(path, url, query) for path, url, _, query in gets if "metric" in query]
    assert {"/v1/rankings", "/v1/history/scores", "/v1/runs/{run_id}/scores"} <= {
        path for path, _, _ in with_metric}
    for path, url, query in with_metric:
        answer = _get(api, url, query, params={"metric": "mape"})

        assert answer.status_code == 422, path
        assert [e["pointer"] for e in answer.json()["errors"]] == ["/metric"], path
