"""Limits: each is configurable, refused with a clear problem, and nothing is stored."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

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
