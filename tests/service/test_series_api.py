"""Series over HTTP: JSON and CSV posts, versions, appends, listing and reading."""

from __future__ import annotations

from tests.service.conftest import Api, series_body
from tests.storage.builders import monthly_series


def _versions(api: Api, key: str) -> list[dict]:
    response = api.get("reader", f"/v1/series/{key}")
    return response.json()["versions"] if response.status_code == 200 else []


def _csv(*series) -> str:
    lines = ["series_key,period,value,frequency"]
    for s in series:
        lines += [f"{s.key},{p},{v},P1M" for p, v in zip(s.labels(), s.values)]
    return "\n".join(lines) + "\n"


def test_posting_a_series_creates_it_and_identical_data_creates_no_version(api: Api):
    series = monthly_series("sales/north", seed=1)

    first = api.post_series(series, tags={"region": "north"})
    again = api.post_series(series)

    assert first.status_code == 201 and again.status_code == 200
    assert first.headers["location"] == "/v1/series/sales/north"
    assert first.json()["created"] is True and again.json()["created"] is False
    assert again.json()["version"] == first.json()["version"]
    assert [v["number"] for v in _versions(api, "sales/north")] == [1]


def test_changed_data_makes_numbered_versions_marked_append_or_revision(api: Api):
    api.post_series(monthly_series("s", n=36, seed=1))
    longer = api.post_series(monthly_series("s", n=40, seed=1))
    revised = api.post_series(monthly_series("s", n=40, seed=2))

    assert longer.json()["version"]["change"] == "append"
    assert revised.json()["version"]["change"] == "revision"
    assert [(v["number"], v["n_obs"]) for v in _versions(api, "s")] == [(1, 36), (2, 40),
                                                                        (3, 40)]


def test_appending_actuals_adds_a_version_once(api: Api):
    api.post_series(monthly_series("s", n=36))
    new = {"observations": [{"period": "2022-01", "value": 140.5},
                            {"period": "2022-02", "value": 141.0}]}

    first = api.post("submitter", "/v1/series/s/observations", json=new)
    retried = api.post("submitter", "/v1/series/s/observations", json=new)

    assert (first.status_code, retried.status_code) == (201, 200)
    assert first.json()["version"]["change"] == "append"
    assert retried.json()["version"]["number"] == 2
    data = api.get("reader", "/v1/series/s/versions/2").json()
    assert data["observations"][-2:] == [
        {"period": "2022-01", "value": 140.5, "filled": False},
        {"period": "2022-02", "value": 141.0, "filled": False}]


def test_an_append_that_would_change_history_is_refused_and_stores_nothing(api: Api):
    series = monthly_series("s", n=36)
    api.post_series(series)
    stored_value = float(series.values[-1])

    response = api.post("submitter", "/v1/series/s/observations", json={"observations": [
        {"period": "2021-12", "value": stored_value + 1}, {"period": "2022-01", "value": 1.0}]})

    assert response.status_code == 409
    assert "2021-12" in response.json()["detail"]
    assert len(_versions(api, "s")) == 1


def test_a_series_cannot_change_its_frequency(api: Api):
    api.post_series(monthly_series("s"))
    body = series_body(monthly_series("s")) | {"frequency": "P3M", "season_length": 4}

    response = api.post("submitter", "/v1/series", json=body)

    assert response.status_code in (409, 422)
    assert _versions(api, "s")[0]["number"] == 1 and len(_versions(api, "s")) == 1


def test_an_invalid_series_is_a_problem_naming_the_row(api: Api):
    body = series_body(monthly_series("s", n=24))
    body["observations"][5]["period"] = body["observations"][4]["period"]

    response = api.post("submitter", "/v1/series", json=body)

    assert response.status_code == 422
    assert response.json()["title"] == "Invalid series"
    # observations are numbered from 1: the 5th and 6th are /observations/4 and /5
    assert "appears twice (observation 5 and observation 6)" in response.json()["detail"]
    assert api.get("reader", "/v1/series/s").status_code == 404


def test_a_csv_upload_stores_every_series_in_it(api: Api):
    a, b = monthly_series("csv/a", seed=1), monthly_series("csv/b", seed=2)

    first = api.post("submitter", "/v1/series/upload?tag=source:erp", content=_csv(a, b),
                     headers={"Content-Type": "text/csv"})
    again = api.post("submitter", "/v1/series/upload?tag=source:erp", content=_csv(a, b),
                     headers={"Content-Type": "text/csv"})

    assert (first.status_code, again.status_code) == (201, 200)
    assert first.json()["versions_created"] == 2 and again.json()["versions_created"] == 0
    assert [s["series_key"] for s in first.json()["series"]] == ["csv/a", "csv/b"]
    listed = api.get("reader", "/v1/series?tag=source:erp").json()["items"]
    assert [(s["key"], s["latest_version"]["n_obs"]) for s in listed] == [("csv/a", 48),
                                                                          ("csv/b", 48)]


def test_a_csv_with_a_bad_row_stores_none_of_its_series(api: Api):
    text = _csv(monthly_series("csv/a"), monthly_series("csv/b")).replace(
        "csv/b,2019-03,", "csv/b,2019-03,abc", 1)

    response = api.post("submitter", "/v1/series/upload", content=text,
                        headers={"Content-Type": "text/csv"})

    assert response.status_code == 422
    assert "line 52" in response.json()["detail"]
    assert api.get("reader", "/v1/series").json()["items"] == []


def test_an_upload_must_be_csv(api: Api):
    response = api.post("submitter", "/v1/series/upload", json={"a": 1})

    assert response.status_code == 415
    assert response.json()["code"] == "unsupported_media_type"


def test_series_are_listed_by_exact_key_prefix_and_tags(any_api: Api):
    for key, region in [("Sales/north", "north"), ("sales/north", "north"),
                        ("sales/south", "south"), ("stock/north", "north")]:
        any_api.post_series(monthly_series(key), tags={"region": region, "unit_kind": "qty"})

    def keys(query: str) -> list[str]:
        return [s["key"] for s in any_api.get("reader", f"/v1/series?{query}").json()["items"]]

    assert keys("prefix=sales/") == ["sales/north", "sales/south"]
    assert keys("tag=region:north") == ["Sales/north", "sales/north", "stock/north"]
    assert keys("tag=region:north&tag=unit_kind:qty&prefix=s") == ["sales/north",
                                                                     "stock/north"]
    assert keys("tag=region:east") == []


def test_series_lists_are_paged(api: Api):
    for i in range(5):
        api.post_series(monthly_series(f"p/{i}", n=24))

    first = api.get("reader", "/v1/series?limit=2")
    second = api.get("reader", first.json()["next"])
    last = api.get("reader", "/v1/series?limit=2&offset=4")

    assert [s["key"] for s in first.json()["items"]] == ["p/0", "p/1"]
    assert first.headers["link"] == f'<{first.json()["next"]}>; rel="next"'
    assert [s["key"] for s in second.json()["items"]] == ["p/2", "p/3"]
    assert last.json()["next"] is None and "link" not in last.headers


def test_a_malformed_tag_filter_points_at_the_parameter(api: Api):
    response = api.get("reader", "/v1/series?tag=region")

    assert response.status_code == 422
    assert response.json()["errors"] == [{"location": "query", "pointer": "/tag/0",
                                          "message": "expected name:value"}]


def test_a_version_reads_back_its_observations_and_filled_periods(api: Api):
    body = series_body(monthly_series("gappy", n=24))
    del body["observations"][10]

    response = api.post("submitter", "/v1/series", json=body | {"fill": "linear"})
    data = api.get("reader", "/v1/series/gappy/versions/1").json()

    assert response.status_code == 201
    assert len(data["observations"]) == 24
    assert [o["period"] for o in data["observations"] if o["filled"]] == ["2019-11"]
    before, after = data["observations"][9]["value"], data["observations"][11]["value"]
    assert data["observations"][10]["value"] == (before + after) / 2
