"""Input a store would choke on is refused as a problem (4xx), never a server error."""

from __future__ import annotations

from collections.abc import Iterator

import pytest

from tests.service.conftest import Api, series_body, serving
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS, migrated_store

HUGE = str(10**20)
OBSERVATIONS = series_body(monthly_series("z", n=24))["observations"]
CSV_ROWS = "\n".join(f"{{key}},{o['period']},{o['value']},P1M" for o in OBSERVATIONS)
CASES = [
    ("GET", f"/v1/runs/{HUGE}", {}),
    ("GET", f"/v1/series?offset={HUGE}", {}),
    ("GET", f"/v1/series/a/versions/{HUGE}", {}),
    ("GET", f"/v1/audit/events?after={HUGE}", {}),
    ("GET", "/v1/series?prefix=a%00b", {}),
    ("GET", "/v1/series/a%00b", {}),
    ("GET", "/v1/runs/1/scores?candidate_id=c%00", {}),
    ("POST", "/v1/keys/a%00b/revoke", {}),
    ("POST", "/v1/series", {"json": series_body(monthly_series("b")) | {"tags": {"x": "a\0"}}}),
    ("POST", "/v1/series", {"json": series_body(monthly_series("c")) | {"unit": "u" * 40}}),
    ("POST", "/v1/series", {"json": {"key": "f", "frequency": "P" + "9" * 30 + "M",
                                     "observations": OBSERVATIONS}}),
    ("POST", "/v1/series", {"json": series_body(monthly_series("k" * 201))}),
    ("POST", "/v1/series/upload", {"content": "series_key,period,value,frequency\n"
                                   + CSV_ROWS.format(key="k" * 300),
                                   "headers": {"Content-Type": "text/csv"}}),
    ("POST", "/v1/series/upload", {"content": "series_key,period,value,frequency\n"
                                   + CSV_ROWS.format(key="a\0b"),
                                   "headers": {"Content-Type": "text/csv"}}),
    ("POST", "/v1/series/upload?tag=x:" + "v" * 300,
     {"content": "series_key,period,value,frequency\n" + CSV_ROWS.format(key="ok"),
      "headers": {"Content-Type": "text/csv"}}),
    ("POST", "/v1/series/upload", {"content": b"\xff\xfe", "headers": {
        "Content-Type": "text/csv"}}),
    ("POST", "/v1/series/upload", {"content": "series_key,period,value\nq,2020-01,1\n",
                                   "headers": {"Content-Type": "text/csv"}}),
    ("POST", "/v1/runs", {"json": {"series": {"keys": ["a"]}, "candidates": [
        {"family": "theta"}], "plan": {"horizon": 2, "seed": 2**32 - 1}}}),
    ("POST", "/v1/runs", {"json": {"series": {"keys": ["a"]}, "candidates": [
        {"family": "theta"}], "plan": {"horizon": 2}}, "headers": {
        "Idempotency-Key": "has space"}}),
    ("POST", "/v1/runs", {"json": {"series": {"keys": ["a"]}, "candidates": "theta",
                                   "plan": {"horizon": 2}}}),
    ("POST", "/v1/runs", {"json": [1, 2, 3]}),
]


@pytest.fixture(scope="module", params=BACKENDS)
def store(request: pytest.FixtureRequest,
          tmp_path_factory: pytest.TempPathFactory) -> Iterator[Api]:
    with (migrated_store(request.param, tmp_path_factory.mktemp("hostile")) as url,
          serving(url) as api):
        assert api.post_series(monthly_series("a")).status_code == 201
        yield api


@pytest.mark.parametrize(("method", "url", "options"), CASES,
                         ids=[f"{i}-{m} {u[:40]}" for i, (m, u, _) in enumerate(CASES)])
def test_hostile_input_is_a_4xx_problem_and_stores_nothing(store: Api, method, url, options):
    role = "admin" if "/keys" in url else "auditor" if "/audit" in url else "submitter"

    response = store.request(role, method, url, **options)

    assert 400 <= response.status_code < 500, response.text
    assert response.headers["content-type"] == "application/problem+json"
    assert [s["key"] for s in store.get("reader", "/v1/series").json()["items"]] == ["a"]
    assert store.get("reader", "/v1/runs/1").status_code == 404
