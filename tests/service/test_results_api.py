"""A run's results over HTTP agree with the engine's own tables, as JSON and as CSV."""

from __future__ import annotations

import csv
import io
import itertools
import math
from collections.abc import Iterator

import pytest

from backtest.results import BacktestResult
from backtest.tidy import fold_rows, ranking_rows, score_rows
from tests.service.conftest import Api, serving
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS, migrated_store


@pytest.fixture(scope="module", params=BACKENDS)
def finished(request: pytest.FixtureRequest,
             tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[Api, int,
                                                                         BacktestResult]]:
    """One succeeded run on two series, shared by the tests (they only read)."""
    with (migrated_store(request.param, tmp_path_factory.mktemp("results")) as url,
          serving(url) as api):
        api.post_series(monthly_series("a", seed=1))
        api.post_series(monthly_series("b", seed=2))
        run = api.submit(["a", "b"], plan={"horizon": 3, "max_origins": 4,
                                           "levels": [50, 90]})
        yield api, run.json()["id"], api.complete(run.json()["id"])


def _same(value, expected) -> bool:
    if expected is None or (isinstance(expected, float) and not math.isfinite(expected)):
        return value is None
    return value == pytest.approx(expected, rel=1e-12) if isinstance(expected, float) \
        else value == expected


def _all_pages(api: Api, url: str) -> list[dict]:
    items: list[dict] = []
    while url:
        page = api.get("reader", url).json()
        items += page["items"]
        url = page["next"]
    return items


def test_scores_are_the_engines_scores(finished):
    api, run_id, result = finished

    items = _all_pages(api, f"/v1/runs/{run_id}/scores?limit=100")

    expected = list(score_rows(result))
    assert len(items) == len(expected)
    for got, want in zip(items, expected):
        assert got["run_id"] == run_id and got["series_version"] == 1
        assert all(_same(got[name], value) for name, value in want.items()), (got, want)


def test_folds_page_through_every_fold_and_horizon_with_their_bounds(finished):
    api, run_id, result = finished

    items = _all_pages(api, f"/v1/runs/{run_id}/folds?limit=7")

    expected = list(fold_rows(result))  # long: one row per level
    levels = result.plan["levels"]
    assert len(items) * len(levels) == len(expected) == 2 * 3 * 4 * 3 * len(levels)
    for i, want in enumerate(expected):
        got = items[i // len(levels)]
        for name, value in want.items():
            actual = (got[name][str(want["level"])] if name in ("lower", "upper")
                      else want["level"] if name == "level" else got[name])
            assert _same(actual, value), (name, got, want)


def test_the_runs_ranking_is_the_engines(finished):
    api, run_id, result = finished

    items = api.get("reader", f"/v1/runs/{run_id}/ranking").json()["items"]

    expected = list(ranking_rows(result))
    assert [(i["series_key"], i["rank"], i["candidate_id"]) for i in items] == [
        (r["series_key"], r["rank"], r["candidate_id"]) for r in expected]


def test_diagnostics_and_evidence_are_the_stored_documents(finished):
    api, run_id, result = finished

    diagnostics = api.get("reader", f"/v1/runs/{run_id}/diagnostics?series_key=b").json()
    evidence = api.get("reader", f"/v1/runs/{run_id}/evidence").json()

    assert [i["series_key"] for i in diagnostics["items"]] == ["b"]
    assert diagnostics["items"][0]["sections"]["diagnostics"] == \
        result.series[1].evidence["diagnostics"]
    assert evidence["items"][0]["sections"]["confidence_set"] == \
        result.series[0].evidence["confidence_set"]
    assert set(evidence["items"][0]["sections"]) == {"calibration", "comparison",
                                                     "ranking_tests", "confidence_set",
                                                     "unavailable"}


def test_csv_has_the_documented_columns_and_the_same_rows(finished):
    api, run_id, result = finished

    by_accept = api.get("reader", f"/v1/runs/{run_id}/scores?limit=10000",
                        headers={"Accept": "text/csv"})
    by_format = api.get("reader", f"/v1/runs/{run_id}/folds?format=csv&limit=10000")

    assert by_accept.headers["content-type"] == "text/csv; charset=utf-8"
    scores = list(csv.DictReader(io.StringIO(by_accept.text)))
    assert list(scores[0]) == ["run_id", "series_key", "series_version", "candidate_id",
                               "candidate", "horizon", "metric", "level", "value", "count",
                               "note"]
    assert len(scores) == len(list(score_rows(result)))
    folds = list(csv.DictReader(io.StringIO(by_format.text)))
    assert list(folds[0])[-4:] == ["point", "level", "lower", "upper"]
    assert [row["level"] for row in folds[:4]] == ["50", "90", "50", "90"]
    first, second = list(itertools.islice(fold_rows(result), 2))
    assert float(folds[0]["point"]) == first["point"] == float(folds[1]["point"])
    assert float(folds[1]["upper"]) == second["upper"] and second["level"] == 90
    assert len(folds) == len(list(fold_rows(result)))


def test_evidence_as_csv_is_one_row_per_value(finished):
    api, run_id, result = finished

    response = api.get("reader", f"/v1/runs/{run_id}/evidence?format=csv&series_key=a")

    rows = list(csv.DictReader(io.StringIO(response.text)))
    included = [r for r in rows if r["section"] == "confidence_set"
                and r["item"].startswith("included.")]
    assert [r["value"] for r in included] == result.series[0].evidence["confidence_set"][
        "included"]


def test_csv_pages_name_the_next_page_in_a_link_header(finished):
    api, run_id, _ = finished

    response = api.get("reader", f"/v1/runs/{run_id}/scores?format=csv&limit=5")

    assert response.headers["link"] == \
        f'</v1/runs/{run_id}/scores?format=csv&offset=5&limit=5>; rel="next"'
    assert len(list(csv.DictReader(io.StringIO(response.text)))) == 5


@pytest.mark.parametrize(("accept", "kind"), [
    ("text/csv", "text/csv"), ("application/json", "application/json"),
    ("text/csv;q=0.5, application/json", "application/json"),
    ("application/json;q=0.2, text/csv", "text/csv"), ("*/*", "application/json"),
    ("text/*", "text/csv")])
def test_the_accept_header_chooses_the_format(api: Api, accept, kind):
    api.post_series(monthly_series("a"))
    run_id = api.submit(["a"]).json()["id"]

    response = api.get("reader", f"/v1/runs/{run_id}/scores", headers={"Accept": accept})

    assert response.status_code == 200
    assert response.headers["content-type"].startswith(kind)


def test_a_format_nobody_offers_is_406(api: Api):
    api.post_series(monthly_series("a"))
    run_id = api.submit(["a"]).json()["id"]

    response = api.get("reader", f"/v1/runs/{run_id}/scores",
                       headers={"Accept": "application/xml"})

    assert response.status_code == 406
    assert response.headers["content-type"] == "application/problem+json"


def test_results_of_a_missing_run_are_404(api: Api):
    assert api.get("reader", "/v1/runs/99/folds").status_code == 404
