"""The reviewer pages in a real browser: Debian's Chromium, headless, driven by Playwright,
against a real ``foldline serve`` on loopback, with JavaScript switched off.

A reader signs in, opens the series list, the series, the run's report and an issued
forecast, and the figures on each page are compared with the JSON API's. Screenshots of
each page at 1,400 px and an A4 PDF print of the report are saved to
``$FOLDLINE_TEST_ARTIFACTS`` (default ``tests/artifacts``). ``/docs`` must render with every
request to another host refused. The test is skipped only when there is no Chromium and CI
is not set; in CI it must run.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import httpx
import pytest

from service.demo.run import _free_port, running_server
from tests.conftest import BRACKETED_LABEL
from tests.e2e.serving import bearer_client, cli, wait_for_run
from tests.service.conftest import series_body
from tests.storage.builders import monthly_series

CHROMIUM = Path("/usr/bin/chromium")
ARTIFACTS = Path(os.environ.get("FOLDLINE_TEST_ARTIFACTS")
                 or Path(__file__).resolve().parents[1] / "artifacts")
SERIES_KEY = "shop/north"
CANDIDATES = [{"family": "benchmark", "method": "naive"},
              {"family": "arima", "order": [1, 0, 0], "seasonal": None,
               "deterministic": "constant"},
              {"family": "theta"}]  # with the plan's seasonal naive: two seasonal labels
PLAN = {"horizon": 3, "max_origins": 4}
A4_POINTS = (595.28, 841.89)  # 210 mm x 297 mm; Chromium rounds to whole pixels
WIDTH = 1400

pytestmark = pytest.mark.skipif(not CHROMIUM.exists() and os.environ.get("CI") != "true",
                                reason="no Chromium at /usr/bin/chromium (CI installs it)")


@dataclass(frozen=True)
class Served:
    """A running server with one finished run, and the keys made for it."""

    url: str
    reader_key: str
    submitter_key: str
    run_id: int
    forecast_id: int
    log: Path


def _create_key(env: dict[str, str], role: str) -> str:
    return cli(env, "keys", "create", "--role", role, "--name", f"browser-{role}"
               ).strip().splitlines()[0]


@pytest.fixture(scope="module")
def served(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Served]:
    directory = tmp_path_factory.mktemp("browser")
    env = {**os.environ, "FOLDLINE_DATABASE_URL": f"sqlite:///{directory / 'foldline.db'}",
           "FOLDLINE_HOST": "127.0.0.1", "FOLDLINE_PORT": str(_free_port()),
           "FOLDLINE_WORKER_JOBS": "1", "FOLDLINE_POLL_SECONDS": "0.2"}
    env.pop("FOLDLINE_SESSION_SECRET", None)
    with running_server(env, directory / "server.log") as url:
        submitter = _create_key(env, "submitter")
        with bearer_client(url, submitter) as client:
            body = {**series_body(monthly_series(SERIES_KEY, seed=4)), "unit": "crates"}
            assert client.post("/v1/series", json=body).status_code == 201
            answer = client.post("/v1/runs", json={"series": {"keys": [SERIES_KEY]},
                                                   "candidates": CANDIDATES, "plan": PLAN})
            assert answer.status_code == 202
            run = wait_for_run(client, answer.headers["Location"], timeout=300)
            assert run["status"] == "succeeded", run
            ranking = client.get(f"/v1/runs/{run['id']}/ranking").json()["items"]
            champion = {"candidate_id": ranking[0]["candidate_id"], "run_id": run["id"],
                        "reason": "lowest MASE in the backtest"}
            assert client.post(f"/v1/series/{SERIES_KEY}/champion",
                               json=champion).status_code == 201
            issued = client.post("/v1/forecasts", json={"series_key": SERIES_KEY,
                                                        "horizon": 3})
            assert issued.status_code == 201, issued.text
        yield Served(url, _create_key(env, "reader"), submitter, run["id"], issued.json()["id"],
                     directory / "server.log")


@pytest.fixture(scope="module")
def api(served: Served) -> Iterator[httpx.Client]:
    """The JSON API, as the reader."""
    with httpx.Client(base_url=served.url, timeout=300,
                      headers={"Authorization": f"Bearer {served.reader_key}"}) as client:
        yield client


@pytest.fixture(scope="module")
def browser():
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        chromium = playwright.chromium.launch(executable_path=str(CHROMIUM), headless=True)
        yield chromium
        chromium.close()


def _cells(row) -> list[str]:
    return [cell.strip() for cell in row.locator("td").all_inner_texts()]


def test_a_reader_signs_in_and_reads_the_series_list_series_and_report(served: Served, api,
                                                                       browser):
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    ranking = api.get(f"/v1/runs/{served.run_id}/ranking").json()["items"]
    top = next(row for row in ranking if row["rank"] == 1)
    fingerprint = api.get(f"/v1/series/{SERIES_KEY}").json()["versions"][0]["fingerprint"]
    context = browser.new_context(java_script_enabled=False, viewport={"width": WIDTH,
                                                                       "height": 900})
    page = context.new_page()
    page.set_default_timeout(240_000)  # the first view of a report renders it

    page.goto(f"{served.url}/pages/")
    assert page.url == f"{served.url}/pages/sign-in"
    page.fill("#key", served.reader_key)
    page.click("button[type=submit]")

    assert page.url == f"{served.url}/pages/"
    session = next(c for c in context.cookies() if c["name"] == "foldline_session")
    assert session["httpOnly"] and session["secure"] and session["sameSite"] == "Strict"
    assert session["path"] == "/pages" and served.reader_key not in session["value"]
    row = page.locator("table.series-list tbody tr", has_text=SERIES_KEY)
    cells = _cells(row)
    assert cells[3].startswith(f"run {served.run_id} on version 1")
    label = top["candidate"] + (" (benchmark)" if top["is_benchmark"] else "")
    ratio = "–" if top["ratio_to_benchmark"] is None else f"{top['ratio_to_benchmark']:.3f}"
    assert cells[5:8] == [label, f"{top['score']:.3f}", ratio]
    champion = api.get(f"/v1/series/{SERIES_KEY}/champion").json()["candidate_id"]
    assert cells[8] == next(r["candidate"] for r in ranking if r["candidate_id"] == champion)
    assert cells[9] == "not enough data"  # the champion's monitoring: nothing issued is due
    _check_width_and_labels(page)
    page.screenshot(path=ARTIFACTS / "01-series-list.png", full_page=True)

    row.get_by_role("link", name=SERIES_KEY).click()
    assert page.url == f"{served.url}/pages/series/{SERIES_KEY}"
    assert fingerprint in page.inner_text("body")
    _check_ranking_table(page, ranking)
    assert page.locator("figure.chart svg").count() >= 3  # overview, forecast, issued fan
    assert "Read with care" in page.inner_text("aside.cautions")
    _check_width_and_labels(page)
    page.screenshot(path=ARTIFACTS / "02-series.png", full_page=True)

    page.get_by_role("link", name=f"run {served.run_id}").first.click()
    assert page.url == f"{served.url}/pages/runs/{served.run_id}"
    assert page.locator("h1").first.inner_text() == f"Foldline run report: run {served.run_id}"
    assert fingerprint in page.inner_text("body")
    _check_ranking_table(page, ranking)
    _check_width_and_labels(page)
    page.screenshot(path=ARTIFACTS / "03-run-report.png", full_page=True)
    page.emulate_media(media="print")
    assert not page.locator("nav.site").is_visible()
    page.pdf(path=ARTIFACTS / "03-run-report.pdf", format="A4", print_background=True)
    page.emulate_media(media="screen")
    pdf = (ARTIFACTS / "03-run-report.pdf").read_bytes()
    pages = re.findall(rb"/MediaBox \[0 0 ([0-9.]+) ([0-9.]+)\]", pdf)
    assert pdf.startswith(b"%PDF") and len(pages) >= 2
    assert all(abs(float(w) - A4_POINTS[0]) < 1.5 and abs(float(h) - A4_POINTS[1]) < 1.5
               for w, h in pages)

    page.goto(f"{served.url}/pages/forecasts/{served.forecast_id}")
    issued = api.get(f"/v1/forecasts/{served.forecast_id}").json()
    rows = page.locator("table").nth(1).locator("tbody tr")
    assert rows.count() == len(issued["steps"]) == 3
    for row, step in zip(rows.all(), issued["steps"]):
        cells = _cells(row)
        assert cells[2] == f"{step['point']:.3f}"
        assert cells[3:5] == [f"{level} %: {step['lower'][str(level)]:.3f} – "
                              f"{step['upper'][str(level)]:.3f}" for level in (80, 95)]
    assert "Read with care" in page.inner_text("aside.cautions")
    assert "The last 12 periods of history" in page.inner_text("figure.chart figcaption")
    _check_width_and_labels(page)
    page.screenshot(path=ARTIFACTS / "04-forecast.png", full_page=True)

    page.click("nav.site button[type=submit]")
    assert page.url == f"{served.url}/pages/sign-in"
    page.goto(f"{served.url}/pages/")
    assert page.url == f"{served.url}/pages/sign-in"
    assert all("fl_" not in url for url in _visited(page))
    context.close()


def test_the_server_says_where_it_listens(served: Served):
    line = next(line for line in served.log.read_text().splitlines()
                if line.startswith("foldline: listening on"))
    assert line.startswith(f"foldline: listening on {served.url} (with an embedded worker)")
    assert "store sqlite:///" in line and f"API docs {served.url}/docs" in line


def test_the_api_docs_render_with_every_other_host_refused(served: Served, browser):
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    context = browser.new_context(viewport={"width": WIDTH, "height": 900})
    refused: list[str] = []

    def only_loopback(route) -> None:
        if route.request.url.startswith(served.url):
            route.continue_()
        else:
            refused.append(route.request.url)
            route.abort()

    context.route("**/*", only_loopback)
    page = context.new_page()
    page.goto(f"{served.url}/docs")
    page.wait_for_selector(".swagger-ui .info .title", timeout=60_000)
    assert page.locator(".swagger-ui .info .title").inner_text().startswith(
        "Foldline")
    assert page.locator(".opblock").count() > 20  # the operations are listed
    assert refused == []
    page.screenshot(path=ARTIFACTS / "05-api-docs.png")
    context.close()


def _check_width_and_labels(page) -> None:
    """The page uses the window (well beyond an A4 column) and prints no bracketed label."""
    width = page.evaluate("document.body.getBoundingClientRect().width")
    assert width > 0.85 * min(WIDTH, 1360), width
    html = page.content()
    assert not BRACKETED_LABEL.search(html), BRACKETED_LABEL.search(html)[0]


def _check_ranking_table(page, ranking: list[dict]) -> None:
    """Every row of the first ranking table on the page agrees with the API's ranking."""
    rows = page.locator("table.ranking").first.locator("tbody tr")
    assert rows.count() == len(ranking)
    for row, expected in zip(rows.all(), ranking):
        cells = _cells(row)
        label = expected["candidate"] + (" (benchmark)" if expected["is_benchmark"] else "")
        assert cells[:4] == [str(expected["rank"]), label, f"{expected['score']:.3f}",
                             f"{expected['score_own_folds']:.3f}"]
        if not expected["is_benchmark"]:
            assert cells[4] == f"{expected['ratio_to_benchmark']:.3f}"


def _visited(page) -> list[str]:
    return [page.url, *(link.get_attribute("href") or "" for link in page.locator("a").all())]
