"""Reviewer pages and the report route, through the real app on a real SQLite store: sign-in
with a session cookie, pages that refuse without it, HTML error pages, and the report cache.

Requests carry the session cookie in an explicit ``Cookie`` header: the cookie is ``Secure``
and the test client speaks plain http, so its cookie jar would not send it back."""

from __future__ import annotations

import re
import time
from collections.abc import Iterator
from pathlib import Path

import pytest

from service.cli.main import build_parser
from service.views.pages.series_list import series_list
from service.views.pages.session import COOKIE, session_value
from storage.access import revoke_key
from storage.ledger import choose_champion
from tests.service.conftest import Api, copied_store, serving
from tests.storage.builders import monthly_series

SECRET = "a session secret for the tests"
UNIT = "<b>kEUR</b>"


@pytest.fixture(scope="module")
def site(sqlite_template: Path, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Api]:
    """Series ``shop/north`` with a finished run 1, and ``shop/south`` with a queued run 2."""
    directory = tmp_path_factory.mktemp("pages")
    with serving(copied_store(sqlite_template, directory), session_secret=SECRET) as api:
        assert api.post_series(monthly_series("shop/north", seed=2), unit=UNIT).status_code == 201
        assert api.post_series(monthly_series("shop/south", seed=5)).status_code == 201
        assert api.submit(["shop/north"]).json()["id"] == 1
        naive = api.complete(1).series[0].candidates[0]
        with api.sessions.begin() as session:
            choose_champion(session, series_key="shop/north", candidate_id=naive.candidate_id,
                            run_id=1, reason="simplest", actor="test")
        assert api.submit(["shop/south"]).json()["id"] == 2
        yield api


def _sign_in(api: Api, key: str):
    api.client.cookies.clear()
    return api.client.post("/pages/sign-in", data={"key": key}, follow_redirects=False)


def _session(api: Api, role: str = "reader") -> dict[str, str]:
    answer = _sign_in(api, api.tokens[role])
    assert answer.status_code == 303
    value = re.match(rf"{COOKIE}=([^;]+)", answer.headers["set-cookie"])[1]
    return {"Cookie": f"{COOKIE}={value}"}


def _page(api: Api, url: str, cookie: dict[str, str]):
    api.client.cookies.clear()
    return api.client.get(url, headers=cookie, follow_redirects=False)


def test_signing_in_sets_a_signed_http_only_strict_secure_cookie(site: Api):
    answer = _sign_in(site, site.tokens["reader"])

    assert answer.status_code == 303 and answer.headers["location"] == "/pages/"
    cookie = answer.headers["set-cookie"]
    attributes = {part.strip().split("=")[0].lower() for part in cookie.split(";")[1:]}
    assert {"httponly", "secure", "samesite", "path", "max-age"} <= attributes
    assert "samesite=strict" in cookie.lower() and "path=/pages" in cookie.lower()
    assert "max-age=28800" in cookie.lower()  # FOLDLINE_SESSION_MINUTES, 480 by default
    secret = site.tokens["reader"].split(".", 1)[1]
    assert secret not in cookie and site.tokens["reader"] not in answer.text


@pytest.mark.parametrize(("headers", "status"), [
    ({"Origin": "https://elsewhere.example"}, 403), ({"Origin": "null"}, 403),
    ({"Origin": "http://testserver"}, 303),
    # a browser on a no-referrer page sends Origin: null with its fetch metadata
    ({"Origin": "null", "Sec-Fetch-Site": "same-origin"}, 303),
    ({"Origin": "http://testserver", "Sec-Fetch-Site": "cross-site"}, 403),
])
def test_a_sign_in_posted_from_another_site_is_refused(site: Api, headers: dict, status: int):
    site.client.cookies.clear()
    answer = site.client.post("/pages/sign-in", data={"key": site.tokens["reader"]},
                              headers=headers, follow_redirects=False)

    assert answer.status_code == status
    assert ("set-cookie" in answer.headers) == (status == 303)


def test_the_form_posts_the_key_in_the_body_and_a_key_in_the_url_is_ignored(site: Api):
    form = site.client.get("/pages/sign-in")
    assert form.status_code == 200 and form.headers["content-type"].startswith("text/html")
    assert '<form class="sign-in" method="post" action="/pages/sign-in">' in form.text
    assert 'name="key" type="password"' in form.text

    in_url = site.client.post(f"/pages/sign-in?key={site.tokens['reader']}",
                              follow_redirects=False)
    assert in_url.status_code == 400 and "set-cookie" not in in_url.headers


@pytest.mark.parametrize("key", ["fl_aaaaaaaaaaaa.wrongwrongwrongwrongwrongwrongwrongwrongwro",
                                 "not a key at all"])
def test_a_bad_key_is_refused_without_a_cookie_or_an_echo(site: Api, key: str):
    answer = _sign_in(site, key)

    assert answer.status_code == 401 and "set-cookie" not in answer.headers
    assert "not a valid API key" in answer.text and key not in answer.text


def test_pages_without_a_valid_session_send_the_browser_to_sign_in(site: Api):
    cookie = _session(site)
    key_id, expires, nonce, signature = cookie["Cookie"].split("=", 1)[1].split(".")
    stretched = {"Cookie": f"{COOKIE}={key_id}.{int(expires) + 3600}.{nonce}.{signature}"}
    ended = session_value(key_id, int(time.time()) - 1, SECRET.encode())
    expired = {"Cookie": f"{COOKIE}={ended}"}
    for url in ("/pages/", "/pages/series/shop/north", "/pages/runs/1"):
        for headers in ({}, stretched, expired, {"Cookie": f"{COOKIE}=garbage"}):
            answer = _page(site, url, headers)
            assert answer.status_code == 303, (url, headers)
            assert answer.headers["location"] == "/pages/sign-in"

    assert _page(site, "/pages/", cookie).status_code == 200


def test_a_key_revoked_after_signing_in_ends_its_session(site: Api):
    cookie = _session(site, "auditor")
    assert _page(site, "/pages/", cookie).status_code == 200
    key_id = site.tokens["auditor"].removeprefix("fl_").split(".")[0]
    with site.sessions.begin() as session:
        revoke_key(session, key_id, actor="test")

    answer = _page(site, "/pages/", cookie)

    assert answer.status_code == 303 and answer.headers["location"] == "/pages/sign-in"
    assert _sign_in(site, site.tokens["auditor"]).status_code == 401


def test_signing_out_clears_the_cookie(site: Api):
    cookie = _session(site)
    answer = site.client.post("/pages/sign-out", headers=cookie, follow_redirects=False)

    assert answer.status_code == 303 and answer.headers["location"] == "/pages/sign-in"
    assert re.search(rf'{COOKIE}="?"?;.*max-age=0', answer.headers["set-cookie"].lower())


def test_signing_out_ends_the_session_on_the_server_and_no_other(site: Api):
    copied, other = _session(site), _session(site)
    assert _page(site, "/pages/", copied).status_code == 200

    site.client.post("/pages/sign-out", headers=copied, follow_redirects=False)

    refused = _page(site, "/pages/", copied)  # a copy of the cookie kept after signing out
    assert refused.status_code == 303 and refused.headers["location"] == "/pages/sign-in"
    assert _page(site, "/pages/", other).status_code == 200


def test_the_series_list_shows_each_series_latest_run_and_top_candidate(site: Api):
    ranking = site.get("reader", "/v1/runs/1/ranking").json()["items"]
    top = next(row for row in ranking if row["rank"] == 1)

    page = _page(site, "/pages/", _session(site)).text

    north = re.search(r"<tr><td><a href=\"/pages/series/shop/north\">.*?</tr>", page)[0]
    cells = re.findall(r"<td[^>]*>(.*?)</td>", north)
    assert cells[2].startswith("1 (48 obs. to 2022-12)")
    assert cells[3].startswith('<a href="/pages/runs/1">run 1</a> on version 1')
    label = top["candidate"] + (" (benchmark)" if top["is_benchmark"] else "")
    ratio = "–" if top["ratio_to_benchmark"] is None else f"{top['ratio_to_benchmark']:.3f}"
    assert cells[5:8] == [label, f"{top['score']:.3f}", ratio]
    assert ">ratio to benchmark</th>" in page and "skill" not in page
    assert cells[8] == "Naive"  # the champion, chosen in the fixture
    assert cells[9] == "not enough data"  # no forecast of it was issued yet
    south = re.search(r"<tr><td><a href=\"/pages/series/shop/south\">.*?</tr>", page)[0]
    assert "none yet" in south and "<td>no champion</td>" in south
    assert "&lt;b&gt;kEUR&lt;/b&gt;" in page and UNIT not in page
    assert "fl_" not in page


def test_the_series_list_pages_by_key_and_filters_by_prefix(site: Api):
    cookie = _session(site)
    keys = re.compile(r'<tr><td><a href="/pages/series/([^"]+)">')

    second = _page(site, "/pages/?offset=1", cookie).text
    north = _page(site, "/pages/?prefix=shop/n", cookie).text
    nothing = _page(site, "/pages/?prefix=depot/", cookie).text
    refused = _page(site, "/pages/?offset=-1", cookie)
    with site.sessions.begin() as session:
        first_of_one = series_list(session, limit=1)
        second_of_one = series_list(session, offset=1, limit=1)

    assert keys.findall(second) == ["shop/south"] and "Series 2, by key" in second
    assert '<a href="/pages/">previous page</a>' in second and "next page" not in second
    assert keys.findall(north) == ["shop/north"]
    assert 'name="prefix" maxlength="200" value="shop/n"' in north
    assert keys.findall(nothing) == [] and "No series on this page." in nothing
    assert refused.status_code == 422 and "<h1>422 " in refused.text
    assert "bad parameter (offset: Input should be greater than or equal to 0)" in refused.text
    assert keys.findall(first_of_one) == ["shop/north"]
    assert '<a href="/pages/?offset=1">next page</a>' in first_of_one
    assert keys.findall(second_of_one) == ["shop/south"]
    assert "next page" not in second_of_one


def test_the_series_list_filters_by_monitoring_state(site: Api):
    cookie = _session(site)
    keys = re.compile(r'<tr><td><a href="/pages/series/([^"]+)">')

    unchosen = _page(site, "/pages/?state=no+champion", cookie).text
    waiting = _page(site, "/pages/?state=not+enough+data&prefix=shop/", cookie).text
    raised = _page(site, "/pages/?state=raised", cookie).text
    refused = _page(site, "/pages/?state=alarming", cookie)

    assert keys.findall(unchosen) == ["shop/south"]
    assert '<option value="no champion" selected>' in unchosen
    assert keys.findall(waiting) == ["shop/north"]
    assert keys.findall(raised) == []
    assert "No series is in monitoring state &#x27;raised&#x27;." in raised
    assert refused.status_code == 422 and "state" in refused.text


def test_the_series_page_shows_versions_runs_ranking_and_charts(site: Api):
    stored = site.get("reader", "/v1/series/shop/north").json()

    page = _page(site, "/pages/series/shop/north", _session(site)).text

    assert stored["versions"][0]["fingerprint"] in page
    assert '<a href="/pages/runs/1">run 1</a>' in page
    assert '<table class="ranking">' in page and page.count("<svg") == 2
    queued = _page(site, "/pages/series/shop/south", _session(site)).text
    assert "<td>run 2</td><td>queued</td>" in queued and "No successful run yet" in queued


def test_unknown_pages_answer_plain_html_errors(site: Api):
    cookie = _session(site)
    for url, status in (("/pages/series/shop/east", 404), ("/pages/runs/99", 404),
                        ("/pages/runs/abc", 404), ("/pages/runs/2", 409)):
        answer = _page(site, url, cookie)
        assert answer.status_code == status, url
        assert answer.headers["content-type"].startswith("text/html")
        assert f"<h1>{status} " in answer.text


def test_the_report_route_refuses_unknown_and_unfinished_runs(site: Api):
    missing = site.get("reader", "/v1/runs/99/report")
    queued = site.get("reader", "/v1/runs/2/report")

    assert missing.status_code == 404 and missing.json()["code"] == "not_found"
    assert queued.status_code == 409 and queued.json()["code"] == "run_not_finished"
    assert site.get(None, "/v1/runs/1/report").status_code == 401


def test_the_report_is_rendered_once_then_served_from_the_cache(site: Api):
    reports = Path(site.url.removeprefix("sqlite:///")).parent / "reports"
    for earlier in reports.glob("run-1-*.html"):
        earlier.unlink()
    started = time.perf_counter()
    first = site.get("admin", "/v1/runs/1/report")
    first_seconds = time.perf_counter() - started
    assert first.status_code == 200 and first.headers["content-type"].startswith("text/html")
    assert "default-src 'none'" in first.headers["content-security-policy"]
    top = next(r for r in site.get("reader", "/v1/runs/1/ranking").json()["items"]
               if r["rank"] == 1)
    label = top["candidate"] + (" (benchmark)" if top["is_benchmark"] else "")
    assert f"<td>{label}</td><td class=\"num\">{top['score']:.3f}</td>" in first.text
    cached = list(reports.glob("run-1-*.html"))
    assert len(cached) == 1 and cached[0].read_text(encoding="utf-8") == first.text
    cached[0].write_text(first.text + "<!-- from the cache -->", encoding="utf-8")

    started = time.perf_counter()
    second = site.get("reader", "/v1/runs/1/report")
    second_seconds = time.perf_counter() - started
    page = _page(site, "/pages/runs/1", _session(site))

    assert second.text.endswith("<!-- from the cache -->")
    assert page.status_code == 200 and page.text.endswith("<!-- from the cache -->")
    assert '<nav class="site">' in page.text and "signed in as reader" in page.text
    assert second_seconds < first_seconds / 3, (first_seconds, second_seconds)
    cached[0].write_text(first.text, encoding="utf-8")


def test_the_report_command_uses_the_same_cache_and_refuses_unfinished_runs(
        site: Api, tmp_path: Path, capsys: pytest.CaptureFixture[str]):
    served = site.get("reader", "/v1/runs/1/report").text
    reports = Path(site.url.removeprefix("sqlite:///")).parent / "reports"
    cached = next(reports.glob("run-1-*.html"))
    cached.write_text(served + "<!-- filed by the server -->", encoding="utf-8")
    parser = build_parser()

    try:
        finished = parser.parse_args(["report", "1", "-o", str(tmp_path / "run-1.html"),
                                      "--database-url", site.url])
        queued = parser.parse_args(["report", "2", "-o", str(tmp_path / "run-2.html"),
                                    "--database-url", site.url])
        assert finished.handler(finished) == 0 and queued.handler(queued) == 2
    finally:
        cached.write_text(served, encoding="utf-8")

    written = (tmp_path / "run-1.html").read_text(encoding="utf-8")
    assert written.endswith("<!-- filed by the server -->")
    assert "run 2 is queued" in capsys.readouterr().err
    assert not (tmp_path / "run-2.html").exists()
