"""The command line and the API agree: the same inputs given to a real ``foldline`` process
and to a real ``foldline serve`` on loopback get the same answers (on SQLite and
PostgreSQL), meet the same limits (one set of ``FOLDLINE_*`` settings, read through
``service/limits.py`` by both) and the same error texts, with candidates numbered from 1
and file lines counted from the header (line 1). Refusals store nothing, so they are
compared on SQLite only."""

from __future__ import annotations

import csv
import io
import json
import os
import subprocess
import sys
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import httpx
import pytest

from tests.e2e.serving import bearer_client, served_store, wait_for_run
from tests.storage.conftest import BACKENDS

FOLDLINE = str(Path(sys.executable).with_name("foldline"))
LIMITS = {"max_horizon": "12", "max_levels": "3", "max_candidates": "3",
          "max_observations": "40", "max_series_per_upload": "3"}
KEY = "shop/quarterly"
QUARTERS = [f"{2016 + i // 4}-Q{i % 4 + 1}" for i in range(28)]  # 2016-Q1 .. 2022-Q4
CANDIDATES = [{"family": "benchmark", "method": "naive"},
              {"family": "benchmark", "method": "drift"}]
PLAN = {"horizon": 4, "max_origins": 3}


def _value(i: int) -> float:
    return round(80 + 2.5 * i + 6 * (i % 4 == 2) - 4 * (i % 4 == 0), 2)


SERIES_CSV = "series_key,period,value,frequency,unit\n" + "".join(
    f"{KEY},{q},{_value(i)},P3M,EUR\n" for i, q in reversed(list(enumerate(QUARTERS))))


@dataclass
class Both:
    """A served store with a submitter's client, and the environment the CLI runs in."""

    client: httpx.Client
    env: dict[str, str]
    folder: Path

    def cli(self, *args: str) -> subprocess.CompletedProcess:
        return subprocess.run([FOLDLINE, *args], env=self.env, capture_output=True,
                              text=True, timeout=300, cwd=self.folder)

    def write(self, name: str, content: object) -> str:
        path = self.folder / name
        path.write_text(content if isinstance(content, str) else json.dumps(content))
        return str(path)

    def backtest(self, series_csv: str, candidates: object, plan: object,
                 *extra: str) -> subprocess.CompletedProcess:
        return self.cli("backtest", self.write("series.csv", series_csv),
                        "--candidates", self.write("candidates.json", candidates),
                        "--plan", self.write("plan.json", plan), *extra)


@pytest.fixture(scope="module", params=BACKENDS)
def both(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
         ) -> Iterator[Both]:
    folder = tmp_path_factory.mktemp(f"agree-{request.param}")
    with served_store(request.param, folder, ["submitter"], **LIMITS) as (base, tokens, url):
        env = {**os.environ, "FOLDLINE_DATABASE_URL": url,
               **{f"FOLDLINE_{name.upper()}": value for name, value in LIMITS.items()}}
        with bearer_client(base, tokens["submitter"]) as client:
            uploaded = client.post("/v1/series/upload", content=SERIES_CSV,
                                   headers={"Content-Type": "text/csv"})
            assert uploaded.status_code == 201, uploaded.text
            yield Both(client, env, folder)


ON_SQLITE = pytest.mark.parametrize("both", ["sqlite"], indirect=True)


def _cli_error(done: subprocess.CompletedProcess) -> str:
    """The one-line message of a refused command, without the ``foldline: error:`` prefix."""
    assert done.returncode == 2, done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("foldline: error: "), done.stderr
    return lines[0].removeprefix("foldline: error: ")


def _problem(response: httpx.Response, status: int = 422) -> dict:
    assert response.status_code == status, response.text
    assert response.headers["content-type"] == "application/problem+json"
    return response.json()


def _run_body(candidates: object = CANDIDATES, plan: object = PLAN) -> dict:
    return {"series": {"keys": [KEY]}, "candidates": candidates, "plan": plan}


def _rows(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


@ON_SQLITE
@pytest.mark.parametrize(("change", "words", "field"), [
    ({"horizon": 13}, "the horizon is 13 steps; at most 12 are accepted (FOLDLINE_MAX_HORIZON)",
     "/plan/horizon"),
    ({"levels": [50, 60, 80, 95]}, "4 interval levels are asked for; at most 3 are accepted "
     "(FOLDLINE_MAX_LEVELS)", "/plan/levels"),
])
def test_a_plan_over_a_limit_is_refused_alike(both: Both, change, words, field):
    plan = {**PLAN, **change}
    said = _cli_error(both.backtest(SERIES_CSV, CANDIDATES, plan))
    problem = _problem(both.client.post("/v1/runs", json=_run_body(plan=plan)))
    assert said == problem["detail"] == words
    assert problem["code"] == "limit_exceeded"
    assert [e["pointer"] for e in problem["errors"]] == [field]


@ON_SQLITE
def test_an_issued_forecast_over_the_horizon_limit_is_refused_alike(both: Both):
    said = _cli_error(both.cli("forecast", "issue", KEY, "--horizon", "13"))
    problem = _problem(both.client.post("/v1/forecasts",
                                        json={"series_key": KEY, "horizon": 13}))
    assert said == problem["detail"] == ("the horizon is 13 steps; at most 12 are accepted "
                                         "(FOLDLINE_MAX_HORIZON)")
    assert problem["limit"] == {"horizon": 12} and problem["estimate"] == {"horizon": 13}
    levels = _cli_error(both.cli("forecast", "issue", KEY, "--horizon", "4",
                                 "--levels", "50,60,80,95"))
    assert levels == _problem(both.client.post("/v1/forecasts", json={
        "series_key": KEY, "horizon": 4, "levels": [50, 60, 80, 95]}))["detail"]


@ON_SQLITE
def test_a_dossier_limit_past_the_bound_is_refused_by_both(both: Both):
    said = _cli_error(both.cli("dossier", KEY, "--limit", "1001"))
    problem = _problem(both.client.get(f"/v1/series/{KEY}/dossier", params={"limit": 1001}))
    assert said == "--limit 1001: give 1 to 1000 (the API's limit too)"
    assert [e["pointer"] for e in problem["errors"]] == ["/limit"]


@ON_SQLITE
def test_too_many_candidates_are_refused_alike(both: Both):
    four = [*CANDIDATES, {"family": "benchmark", "method": "mean"},
            {"family": "benchmark", "method": "seasonal_naive"}]
    said = _cli_error(both.backtest(SERIES_CSV, four, PLAN))
    problem = _problem(both.client.post("/v1/runs", json=_run_body(candidates=four)))
    assert said == problem["detail"] == ("the run lists 4 candidates; at most 3 are accepted "
                                         "(FOLDLINE_MAX_CANDIDATES)")


@ON_SQLITE
@pytest.mark.parametrize(("candidates", "words", "pointer"), [
    ([CANDIDATES[0], {"family": "arima", "order": [9, 0, 0]}], "candidate 2: ", "/candidates/1"),
    ([{"family": "ets", "trend": "sideways"}], "candidate 1: ", "/candidates/0"),
    ([*CANDIDATES, CANDIDATES[0]], "candidate 3 repeats an earlier candidate", "/candidates/2"),
])
def test_candidates_are_numbered_from_one_alike(both: Both, candidates, words, pointer):
    said = _cli_error(both.backtest(SERIES_CSV, candidates, PLAN))
    problem = _problem(both.client.post("/v1/runs", json=_run_body(candidates=candidates)))
    assert said == problem["detail"] and said.startswith(words)
    assert [e["pointer"] for e in problem["errors"]] == [pointer]  # RFC 6901 counts from 0


@ON_SQLITE
@pytest.mark.parametrize(("text", "words"), [
    ("series_key,period,value,frequency\na,2020-Q1,1,P3M\nb,2020-Q1,1,P3M\na,2020-Q2,x,P3M\n",
     "series 'a', line 4: value 'x' is not a number"),
    ("series_key,period,value,frequency\na,2020-Q2,1,P3M\nb,2020-Q1,1,P3M\na,2020-Q1,2,P3M\n"
     "a,2020-Q2,3,P3M\n", "series 'a': period '2020-Q2' appears twice (line 2 and line 5)"),
    ("series_key,period,value,frequency\na,2020-01,1,P1M\na,2020-02,2,P1M\na,2020-02-15,3,P1M\n",
     "series 'a', line 4: period '2020-02-15' is off the monthly grid"),
    ("series_key,period,value,frequency\na,2010-01,1,P1M\na,2020-01,2,P1M\n",
     "series 'a' has 121 observations; at most 40 per series are accepted "
     "(FOLDLINE_MAX_OBSERVATIONS); nothing was stored"),
])
def test_file_errors_name_the_line_and_the_series_alike(both: Both, text, words):
    said = _cli_error(both.backtest(text, CANDIDATES, PLAN))
    problem = _problem(both.client.post("/v1/series/upload", content=text,
                                        headers={"Content-Type": "text/csv"}))
    assert words in problem["detail"]
    assert said == f"series file {both.folder / 'series.csv'}: {problem['detail']}"


@ON_SQLITE
def test_a_missing_frequency_names_the_option_or_the_parameter(both: Both):
    text = "series_key,period,value\na,2020-Q1,1\na,2020-Q2,2\n"
    said = _cli_error(both.backtest(text, CANDIDATES, PLAN))
    problem = _problem(both.client.post("/v1/series/upload", content=text,
                                        headers={"Content-Type": "text/csv"}))
    common = ("series 'a', line 2: no frequency; add a frequency column (an ISO 8601 duration "
              "such as P1M, P3M, P1W) or add the ")
    assert problem["detail"].startswith(common) and common in said
    assert "--frequency P1M" in said and "?frequency=P1M" in problem["detail"]


def test_the_answers_agree(both: Both):
    """The same file, candidates and plan: the CLI's backtest and the served run rank alike
    on the same quarters; a forecast issued by the CLI is the API's ledger entry."""
    out = both.folder / "out"
    done = both.backtest(SERIES_CSV, CANDIDATES, PLAN, "--out", str(out))
    assert done.returncode == 0, done.stderr
    run = both.client.post("/v1/runs", json=_run_body())
    assert run.status_code == 202, run.text
    finished = wait_for_run(both.client, run.headers["Location"])
    assert finished["status"] == "succeeded"
    served = _rows(both.client.get(f"/v1/runs/{finished['id']}/ranking",
                                   params={"format": "csv"}).text)
    local = _rows((out / "ranking.csv").read_text())
    same = ("series_key", "rank", "candidate_id", "candidate", "is_benchmark", "folds_ok")
    assert [{k: r[k] for k in same} for r in local] == [{k: r[k] for k in same} for r in served]
    for mine, theirs in zip(local, served, strict=True):
        assert float(mine["score"]) == pytest.approx(float(theirs["score"]), rel=1e-12)
    served_folds = _rows(both.client.get(f"/v1/runs/{finished['id']}/folds",
                                         params={"format": "csv"}).text)
    local_folds = _rows((out / "folds.csv").read_text())
    assert sorted({(r["origin"], r["period"]) for r in local_folds}) == sorted(
        {(r["origin"], r["period"]) for r in served_folds})
    assert {r["period"] for r in served_folds} >= {"2022-Q2", "2022-Q3", "2022-Q4"}

    naive = next(r["candidate_id"] for r in served if r["candidate"] == "Naive")
    chosen = both.cli("champion", "set", KEY, "--candidate", naive, "--run",
                      str(finished["id"]), "--reason", "plain and honest")
    assert chosen.returncode == 0, chosen.stderr
    issued = both.cli("forecast", "issue", KEY, "--horizon", "4")
    assert issued.returncode == 0, issued.stderr
    assert "2023-Q1" in issued.stdout and "2023-01" not in issued.stdout
    listed = both.cli("forecast", "list", "--csv")
    assert listed.returncode == 0, listed.stderr
    ledger = _rows(both.client.get("/v1/forecasts", params={"format": "csv"}).text)
    assert _rows(listed.stdout) == ledger
    assert [r["period"] for r in ledger if r["level"] == "80"] == [
        "2023-Q1", "2023-Q2", "2023-Q3", "2023-Q4"]
    again = both.client.post("/v1/forecasts", json={"series_key": KEY, "horizon": 4})
    assert again.status_code == 200  # identical inputs: the forecast the CLI issued
    assert again.json()["id"] == int(ledger[0]["forecast_id"])


@ON_SQLITE
@pytest.mark.parametrize(("levels", "words"), [
    ([150], "interval levels are whole percentages from 1 to 99; got 150"),
    ([80, 0], "interval levels are whole percentages from 1 to 99; got 0"),
    ([80, 80], "interval levels repeat a value")])
def test_issued_forecast_levels_out_of_range_are_refused_alike(both: Both, levels, words):
    said = _cli_error(both.cli("forecast", "issue", KEY, "--horizon", "4",
                               "--levels", ",".join(map(str, levels))))
    problem = _problem(both.client.post("/v1/forecasts", json={
        "series_key": KEY, "horizon": 4, "levels": levels}))
    assert said == problem["detail"] == words
    assert problem["code"] == "invalid_input"
    assert [e["pointer"] for e in problem["errors"]] == ["/levels"]
