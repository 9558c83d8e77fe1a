"""GET /v1/runs: filters, keyset paging, labels beside candidate ids, links to the results."""

from __future__ import annotations

from datetime import datetime, timedelta

from backtest.candidates import parse_candidate
from tests.service.conftest import CANDIDATES, Api
from tests.storage.builders import monthly_series


def _store(api: Api) -> list[int]:
    """Five runs: a, b, a+b queued by the submitter, the first two completed, one cancelled."""
    api.post_series(monthly_series("a", seed=1))
    api.post_series(monthly_series("b", seed=2))
    ids = [api.submit(keys).json()["id"] for keys in (["a"], ["b"], ["a", "b"], ["a"])]
    api.complete(ids[0])
    api.complete(ids[1])
    api.post("submitter", f"/v1/runs/{ids[3]}/cancel")
    return ids


def test_runs_are_listed_newest_first_with_labels_and_links(any_api: Api):
    ids = _store(any_api)

    page = any_api.get("reader", "/v1/runs").json()

    assert [run["id"] for run in page["items"]] == ids[::-1]
    assert page["next"] is None
    run = page["items"][-1]
    expected = [parse_candidate(spec) for spec in CANDIDATES]
    assert run["candidates"] == [{"id": c.id, "label": c.label(12)} for c in expected]
    assert run["candidate_ids"] == [c["id"] for c in run["candidates"]]
    assert run["links"]["report"] == f"/v1/runs/{ids[0]}/report"
    assert any_api.get("reader", run["links"]["ranking"]).status_code == 200


def test_filters_narrow_the_listing(any_api: Api):
    ids = _store(any_api)

    def listed(query: str) -> list[int]:
        response = any_api.get("reader", f"/v1/runs?{query}")
        assert response.status_code == 200, response.text
        return [run["id"] for run in response.json()["items"]]

    assert listed("status=succeeded") == [ids[1], ids[0]]
    assert listed("status=cancelled") == [ids[3]]
    assert listed("status=queued") == [ids[2]]
    assert listed("series_key=b") == [ids[2], ids[1]]
    assert listed("series_key=nowhere") == []
    assert listed("requested_by=submitter") == ids[::-1]
    assert listed("requested_by=admin") == []
    now = datetime.now().astimezone()
    hour = timedelta(hours=1)
    window = (f"finished_from={(now - hour).isoformat()}&finished_to={(now + hour).isoformat()}"
              .replace("+", "%2B"))
    assert listed(window) == [ids[3], ids[1], ids[0]]  # the cancelled run finished too
    assert listed(f"finished_to={(now - hour).isoformat()}".replace("+", "%2B")) == []


def test_the_cursor_walks_every_run_once_while_new_runs_arrive(api: Api):
    ids = _store(api)
    seen, url = [], "/v1/runs?limit=2"
    while url:
        response = api.get("reader", url)
        seen += [run["id"] for run in response.json()["items"]]
        url = response.json()["next"]
        if url:
            assert response.headers["Link"] == f'<{url}>; rel="next"'
            api.submit(["a"])  # a newer run does not shift the pages already handed out

    assert seen == ids[::-1]


def test_bad_filters_are_422_problems_naming_the_parameter(api: Api):
    for query, name in (("status=done", "status"), ("limit=0", "limit"),
                        ("limit=101", "limit"), ("before=0", "before"),
                        ("finished_from=yesterday", "finished_from")):
        response = api.get("reader", f"/v1/runs?{query}")

        assert response.status_code == 422, query
        assert response.headers["content-type"].startswith("application/problem+json")
        assert name in response.text


def test_listing_needs_a_key(api: Api):
    assert api.get(None, "/v1/runs").status_code == 401
