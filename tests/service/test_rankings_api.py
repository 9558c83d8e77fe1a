"""The BI ranking: each series' candidates on its latest successful run, flat and paged."""

from __future__ import annotations

import csv
import io
from collections.abc import Iterator
from dataclasses import replace
from datetime import datetime

import pytest

from backtest.results import SeriesResult
from storage.results.queries import ranked_candidates
from tests.service.conftest import Api, serving
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS, migrated_store

CANDIDATES = [{"family": "benchmark", "method": "naive"},
              {"family": "benchmark", "method": "drift"}, {"family": "theta"}]
PLAN = {"horizon": 3, "max_origins": 4, "levels": [80]}


def _tie_and_gap(unit: SeriesResult) -> SeriesResult:
    """Pooled MAE: drift ties with naive, theta has no value."""
    ids = [c.candidate_id for c in unit.candidates]
    naive, drift, theta = ids[0], ids[1], ids[2]
    pooled = {s.candidate_id: s for s in unit.scores if s.metric == "mae" and s.horizon is None}

    def changed(score):
        if score.metric != "mae" or score.horizon is not None:
            return score
        if score.candidate_id == drift:
            return replace(score, value=pooled[naive].value)
        if score.candidate_id == theta:
            return replace(score, value=None, note="no value on purpose")
        return score

    return replace(unit, scores=tuple(changed(s) for s in unit.scores))


@pytest.fixture(scope="module", params=BACKENDS)
def ranked(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
           ) -> Iterator[Api]:
    """Series north (two runs, the latest on version 2 with a tie and a gap), south (one
    run), west (none), and a cancelled run; shared by the tests (they only read)."""
    with (migrated_store(request.param, tmp_path_factory.mktemp("rankings")) as url,
          serving(url) as api):
        _stock(api)
        yield api


def _stock(api: Api) -> None:
    api.post_series(monthly_series("north", seed=1), tags={"region": "n"})
    api.post_series(monthly_series("south", seed=2), tags={"region": "s"})
    api.post_series(monthly_series("west", seed=3), tags={"region": "w"})
    old = api.submit(["north", "south"], candidates=CANDIDATES, plan=PLAN).json()["id"]
    api.complete(old)
    api.post("submitter", "/v1/series/north/observations",
             json={"observations": [{"period": "2023-01", "value": 150.0}]})
    new = api.submit(["north"], candidates=CANDIDATES, plan=PLAN).json()["id"]
    api.complete(new, adjust=_tie_and_gap)
    cancelled = api.submit(["north"], candidates=CANDIDATES[:1], plan=PLAN).json()["id"]
    api.post("submitter", f"/v1/runs/{cancelled}/cancel")


def _reference(api: Api, key: str, **score) -> list[tuple]:
    with api.sessions.begin() as session:
        return [(r.rank, r.candidate_id, r.value)
                for r in ranked_candidates(session, key, **score)]


@pytest.mark.parametrize("query, score", [
    ("metric=mae", {"metric": "mae"}),
    ("metric=rmse&horizon=2", {"metric": "rmse", "horizon": 2}),
    ("metric=winkler&horizon=1&level=80", {"metric": "winkler", "horizon": 1, "level": 80}),
    ("metric=crps", {"metric": "crps"}),
    ("metric=scaled_pinball&horizon=2", {"metric": "scaled_pinball", "horizon": 2}),
    ("metric=pinball&level=80", {"metric": "pinball", "level": 80}),
    ("metric=pinball", {"metric": "pinball"}),
])
def test_each_series_is_ranked_on_its_latest_successful_run(ranked: Api, query, score):
    items = ranked.get("reader", f"/v1/rankings?{query}").json()["items"]

    assert sorted({i["series_key"] for i in items}) == ["north", "south"]
    for key in ("north", "south"):
        rows = [i for i in items if i["series_key"] == key]
        assert [(i["rank"], i["candidate_id"], i["value"]) for i in rows] == \
            _reference(ranked, key, **score)
    north = [i for i in items if i["series_key"] == "north"]
    assert {(i["run_id"], i["series_version"]) for i in north} == {(2, 2)}
    assert sum(i["is_benchmark"] for i in north) == 1


def test_ties_share_a_rank_and_unscored_candidates_come_last(ranked: Api):
    items = ranked.get("reader", "/v1/rankings?metric=mae&prefix=north").json()["items"]

    ranks = [i["rank"] for i in items]
    assert ranks[-1] is None and items[-1]["value"] is None
    assert ranks[:2] == [1, 1] and items[0]["value"] == items[1]["value"]
    assert items[0]["candidate_id"] < items[1]["candidate_id"]
    assert ranks[2] == 3


def test_the_ranking_filters_by_tag_and_pages(ranked: Api):
    south = ranked.get("reader", "/v1/rankings?tag=region:s").json()["items"]
    pages = [ranked.get("reader", "/v1/rankings?limit=3").json()]
    while pages[-1]["next"]:
        pages.append(ranked.get("reader", pages[-1]["next"]).json())
    whole = ranked.get("reader", "/v1/rankings").json()["items"]

    assert {i["series_key"] for i in south} == {"south"}
    assert [len(p["items"]) for p in pages] == [3, 3, 2]
    assert [i for p in pages for i in p["items"]] == whole


def test_the_ranking_as_csv_is_a_flat_table(ranked: Api):
    response = ranked.get("reader", "/v1/rankings?format=csv")

    rows = list(csv.DictReader(io.StringIO(response.text)))
    assert list(rows[0]) == ["series_key", "series_version", "run_id", "run_finished_at",
                             "metric", "horizon", "level", "rank", "candidate_id",
                             "candidate", "is_benchmark", "value", "count", "note"]
    assert len(rows) == 8
    assert datetime.fromisoformat(rows[0]["run_finished_at"]).tzinfo is not None
    assert "T" in rows[0]["run_finished_at"]
    assert {r["metric"] for r in rows} == {"mase"} and {r["horizon"] for r in rows} == {""}


@pytest.mark.parametrize("query", ["metric=winkler", "metric=mase&level=80",
                                   "metric=coverage", "horizon=0",
                                   "metric=crps&level=80"])
def test_a_score_that_cannot_rank_is_refused(api: Api, query):
    response = api.get("reader", f"/v1/rankings?{query}")

    assert response.status_code == 422
    assert response.json()["errors"]


def test_a_run_that_succeeds_after_a_cached_page_changes_the_ranking(api: Api):
    api.post_series(monthly_series("east", seed=4))
    first = api.submit(["east"], candidates=CANDIDATES, plan=PLAN).json()["id"]
    api.complete(first)
    before = api.get("reader", "/v1/rankings?limit=2").json()["items"]
    api.post("submitter", "/v1/series/east/observations",
             json={"observations": [{"period": "2023-01", "value": 150.0}]})
    second = api.submit(["east"], candidates=CANDIDATES, plan=PLAN).json()["id"]
    api.complete(second)
    after = api.get("reader", "/v1/rankings?limit=2").json()["items"]

    assert {i["run_id"] for i in before} == {first}
    assert {i["run_id"] for i in after} == {second}
    assert {i["series_version"] for i in after} == {2}
