"""Limits: each is configurable, refused with a clear problem, and nothing is stored."""

from __future__ import annotations

import tracemalloc
from collections.abc import Callable, Iterator
from pathlib import Path

import httpx
import pytest

from service.settings import Settings
from tests.service.conftest import Api, series_body, serving
from tests.storage.builders import monthly_series
from tests.storage.conftest import migrated_store

LIMITS = {"max_body_bytes": 4096, "max_observations": 40, "max_series_per_upload": 2,
          "max_candidates": 2, "max_folds": 30}


@pytest.fixture
def strict(tmp_path: Path) -> Iterator[Api]:
    with migrated_store("sqlite", tmp_path) as url, serving(url, **LIMITS) as api:
        yield api


def _nothing_stored(api: Api) -> bool:
    return api.get("reader", "/v1/series").json()["items"] == []


def _csv(count: int, n: int) -> str:
    lines = ["series_key,period,value,frequency"]
    for i in range(count):
        s = monthly_series(f"s{i}", n=n)
        lines += [f"{s.key},{p},{v},P1M" for p, v in zip(s.labels(), s.values)]
    return "\n".join(lines) + "\n"


def test_the_defaults_are_documented_numbers():
    defaults = Settings(database_url="sqlite://")

    assert (defaults.max_body_bytes, defaults.max_observations, defaults.max_series_per_upload,
            defaults.max_candidates, defaults.max_folds) == (10 * 1024 * 1024, 10_000, 1_000,
                                                             20, 500_000)


def test_a_body_over_the_size_limit_is_413(strict: Api):
    body = series_body(monthly_series("big", n=36)) | {"unit": "x" * 4000}

    response = strict.post("submitter", "/v1/series", json=body)

    assert response.status_code == 413
    assert response.json()["code"] == "body_too_large"
    assert "FOLDLINE_MAX_BODY_BYTES" in response.json()["detail"]
    assert _nothing_stored(strict)


def test_an_upload_over_the_size_limit_is_413(strict: Api):
    response = strict.post("submitter", "/v1/series/upload", content=_csv(1, 200),
                           headers={"Content-Type": "text/csv"})

    assert response.status_code == 413
    assert _nothing_stored(strict)


def test_too_many_observations_is_422(strict: Api):
    response = strict.post_series(monthly_series("long", n=41))

    assert response.status_code == 422
    assert response.json()["code"] == "limit_exceeded"
    assert response.json()["errors"][0]["pointer"] == "/observations"
    assert "FOLDLINE_MAX_OBSERVATIONS" in response.json()["detail"]
    assert _nothing_stored(strict)


def test_filling_gaps_past_the_observation_limit_is_422(strict: Api):
    body = series_body(monthly_series("gappy", n=45))
    del body["observations"][5:10]

    response = strict.post("submitter", "/v1/series", json=body | {"fill": "linear"})

    assert response.status_code == 422 and response.json()["code"] == "limit_exceeded"
    assert _nothing_stored(strict)


def test_too_many_series_in_one_upload_is_422(strict: Api):
    response = strict.post("submitter", "/v1/series/upload", content=_csv(3, 12),
                           headers={"Content-Type": "text/csv"})

    assert response.status_code == 422
    assert "FOLDLINE_MAX_SERIES_PER_UPLOAD" in response.json()["detail"]
    assert _nothing_stored(strict)


def test_too_many_candidates_is_422(strict: Api):
    strict.post_series(monthly_series("a", n=36))

    response = strict.submit(["a"], candidates=[{"family": "theta"},
                                                {"family": "benchmark", "method": "naive"},
                                                {"family": "benchmark", "method": "drift"}])

    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/candidates"
    assert strict.get("reader", "/v1/runs/1").status_code == 404


def test_too_many_folds_is_422_and_says_how_many(strict: Api):
    strict.post_series(monthly_series("a", n=36))

    # 2 candidates + the seasonal naive benchmark, 11 origins each: 33 folds.
    response = strict.submit(["a"], plan={"horizon": 2, "max_origins": 11})
    within = strict.submit(["a"], plan={"horizon": 2, "max_origins": 10})

    assert response.status_code == 422
    assert "33 folds" in response.json()["detail"]
    assert within.status_code == 202 and within.json()["id"] == 1


def test_a_streamed_body_is_counted_as_it_arrives(strict: Api):
    chunks = iter([_csv(1, 12).encode()] + [b"s0,2030-01,1.0,P1M\n" * 50] * 10)

    response = strict.post("submitter", "/v1/series/upload", content=chunks,
                           headers={"Content-Type": "text/csv"})

    assert "content-length" not in response.request.headers
    assert response.status_code == 413
    assert response.json()["code"] == "body_too_large"
    assert _nothing_stored(strict)


def _peak_bytes(request: Callable[[], httpx.Response]) -> tuple[httpx.Response, int]:
    tracemalloc.start()
    try:
        response = request()
        return response, tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def test_a_span_past_the_observation_limit_is_refused_before_filling(strict: Api):
    # 170 bytes asking to fill 3,652,059 days; the default limit would be 10,000.
    body = {"key": "wide", "frequency": "P1D", "fill": "linear",
            "observations": [{"period": "0001-01-01", "value": 1},
                             {"period": "9999-12-31", "value": 2}]}

    response, peak = _peak_bytes(lambda: strict.post("submitter", "/v1/series", json=body))

    assert response.status_code == 422 and response.json()["code"] == "limit_exceeded"
    assert "3652059" in response.json()["detail"]
    assert peak < 5_000_000  # filling first took about 330 MB
    assert _nothing_stored(strict)


def test_a_csv_span_past_the_observation_limit_is_refused_before_filling(strict: Api):
    rows = "".join(f"w{i},0001-01-01,1,P1D\nw{i},9999-12-31,2,P1D\n" for i in range(2))
    csv_text = "series_key,period,value,frequency\n" + rows

    response, peak = _peak_bytes(lambda: strict.post(
        "submitter", "/v1/series/upload?fill=linear", content=csv_text,
        headers={"Content-Type": "text/csv"}))

    assert response.status_code == 422 and response.json()["code"] == "limit_exceeded"
    assert peak < 5_000_000
    assert _nothing_stored(strict)


def test_an_upload_with_too_many_series_stops_at_the_first_one_too_many(strict: Api):
    # The third series is too wide to fill; counting series first refuses it unbuilt.
    csv_text = _csv(2, 12) + "s9,0001-01-01,1,P1D\ns9,9999-12-31,2,P1D\n"

    response, peak = _peak_bytes(lambda: strict.post(
        "submitter", "/v1/series/upload?fill=linear", content=csv_text,
        headers={"Content-Type": "text/csv"}))

    assert response.status_code == 422
    assert "FOLDLINE_MAX_SERIES_PER_UPLOAD" in response.json()["detail"]
    assert peak < 5_000_000


@pytest.fixture
def costly(tmp_path: Path) -> Iterator[Api]:
    limits = {"max_folds": 10_000, "max_run_fits": 300, "max_run_rows": 2_000,
              "max_horizon": 12, "max_levels": 3}
    with migrated_store("sqlite", tmp_path) as url, serving(url, **limits) as api:
        api.post_series(monthly_series("a", n=60))
        yield api


def test_a_run_over_the_row_estimate_is_refused_with_estimate_and_limit(costly: Api):
    # naive, drift and the seasonal-naive benchmark, 10 origins: 30 folds. Rows: 30 x
    # (1 + 6 x (1 + 3)) fold rows + 1 unit + 3 x ((6 + 1) x (7 + 3 + 3 x 4) + 2) per-candidate
    # rows (7 point, 3 distribution and 4 level scores) = 750 + 1 + 468 = 1,219; horizon 12
    # and 3 levels: 1,470 + 1 + 3 x 288 = 2,335.
    within = costly.submit(["a"], plan={"horizon": 6, "max_origins": 10, "levels": [50, 80, 95]})
    response = costly.submit(["a"], plan={"horizon": 12, "max_origins": 10,
                                          "levels": [50, 80, 95]})

    assert within.status_code == 202
    problem = response.json()
    assert response.status_code == 422 and problem["code"] == "limit_exceeded"
    assert problem["estimate"]["rows"] == 2_335 and problem["limit"]["rows"] == 2_000
    assert problem["estimate"]["folds"] == 30
    assert "2335 result rows" in problem["detail"] and "FOLDLINE_MAX_RUN_ROWS" in problem["detail"]
    assert costly.get("reader", "/v1/runs/2").status_code == 404


def test_a_run_over_the_fit_estimate_is_refused_by_family(costly: Api):
    # An order search may try 40 orders per estimation: 10 re-estimating origins plus the
    # full-series fit are 440 fits, over the limit of 300.
    response = costly.submit(["a"], candidates=[{"family": "arima_search"}],
                             plan={"horizon": 1, "max_origins": 10})

    problem = response.json()
    assert response.status_code == 422
    assert problem["estimate"]["fits"]["arima_search"] == 440
    assert problem["estimate"]["fits"]["benchmark"] == 11
    assert problem["limit"]["total_fits"] == 300
    assert "FOLDLINE_MAX_RUN_FITS" in problem["detail"]


@pytest.mark.parametrize(("plan", "pointer"), [
    ({"horizon": 13}, "/plan/horizon"),
    ({"horizon": 1, "levels": [50, 60, 70, 80]}, "/plan/levels")])
def test_horizon_and_levels_are_capped(costly: Api, plan: dict, pointer: str):
    response = costly.submit(["a"], plan=plan)

    assert response.status_code == 422 and response.json()["code"] == "limit_exceeded"
    assert response.json()["errors"][0]["pointer"] == pointer
