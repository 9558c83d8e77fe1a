"""Every CSV the service and the command line write neutralises spreadsheet formulas.

The rule is OWASP's "CSV Injection" advice: a text cell starting with ``=``, ``+``, ``-``,
``@``, a tab or a carriage return is written with a leading ``'``; numbers stay numbers.
The walk below reads every route whose OpenAPI answer offers ``text/csv`` and every CSV the
``foldline`` command writes, with a series key, a champion reason and series values
chosen to trip it.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from urllib.parse import quote

import pytest

from backtest.series import make_series
from backtest.tidy import csv_cell, write_csv
from service.cli.main import main
from service.usecases.score_outcomes import score_due_outcomes
from tests.service.conftest import Api
from tests.storage.builders import monthly_series

KEY = "=1+2"
REASON = "@SUM(A1:A9)"
HOSTILE = monthly_series(KEY, 48, seed=5)
DANGER = ("=", "+", "-", "@", "\t", "\r")


@pytest.mark.parametrize(("value", "written"), [
    ("=1+2", "'=1+2"), ("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"), ("-2+3", "'-2+3"),
    ("@SUM(A1)", "'@SUM(A1)"), ("\tx", "'\tx"), ("\rx", "'\rx"), ("-", "'-"),
    ("-1.5", "-1.5"), ("+2", "+2"), ("-3e-4", "-3e-4"), (-1.5, -1.5), (0, 0), (None, None),
    ("sales/north", "sales/north"), ("a=b", "a=b"),
])
def test_a_cell_is_neutralised_only_when_it_would_start_a_formula(value, written):
    assert csv_cell(value) == written


def test_the_writer_quotes_and_escapes_and_keeps_numbers_as_numbers():
    out = io.StringIO()
    write_csv([{"key": "=HYPERLINK(\"http://x\")", "value": -2.5, "note": "-"}],
              ("key", "value", "note"), out)

    assert out.getvalue() == "key,value,note\n\"'=HYPERLINK(\"\"http://x\"\")\",-2.5,'-\n"


def _cells(text: str) -> list[str]:
    return [cell for row in csv.reader(io.StringIO(text)) for cell in row]


def _unsafe(cells: list[str]) -> list[str]:
    return [c for c in cells if c.startswith(DANGER) and csv_cell(c) != c]


@pytest.fixture
def ledger(api: Api) -> Api:
    """The hostile series backtested, its champion chosen, a forecast issued and scored
    against an actual far below it (a negative error)."""
    assert api.post_series(HOSTILE).status_code == 201
    api.complete(api.submit([KEY]).json()["id"])
    path = f"/v1/series/{quote(KEY, safe='')}"
    naive = api.get("reader", "/v1/runs/1/ranking").json()["items"][0]["candidate_id"]
    assert api.post("submitter", f"{path}/champion", json={
        "candidate_id": naive, "run_id": 1, "reason": REASON}).status_code == 201
    assert api.post("submitter", "/v1/forecasts", json={"series_key": KEY,
                                                        "horizon": 3}).status_code == 201
    assert api.post("submitter", f"{path}/observations", json={
        "observations": [{"period": HOSTILE.label(48), "value": 1.0}]}).status_code == 201
    assert score_due_outcomes(api.sessions, actor="worker-a") == 1
    return api


def test_every_csv_route_neutralises_formulas_and_keeps_negative_numbers(ledger: Api):
    key = quote(KEY, safe="")
    naive = ledger.get("reader", "/v1/runs/1/ranking").json()["items"][0]["candidate_id"]
    query = {"/v1/history/scores": {"series_key": KEY, "candidate_id": naive},
             "/v1/history/version-runs": {"series_key": KEY, "version": 1}}
    urls = {
        "/v1/series/{key}/champion/history": f"/v1/series/{key}/champion/history",
        "/v1/champions": "/v1/champions",
        "/v1/runs/{run_id}/champion-suggestions": "/v1/runs/1/champion-suggestions",
        "/v1/series/{key}/monitoring": f"/v1/series/{key}/monitoring",
        "/v1/monitoring": "/v1/monitoring",
        "/v1/runs/{run_id}/scores": "/v1/runs/1/scores",
        "/v1/runs/{run_id}/folds": "/v1/runs/1/folds",
        "/v1/runs/{run_id}/ranking": "/v1/runs/1/ranking",
        "/v1/runs/{run_id}/diagnostics": "/v1/runs/1/diagnostics",
        "/v1/runs/{run_id}/evidence": "/v1/runs/1/evidence",
        "/v1/rankings": "/v1/rankings",
        "/v1/forecasts": "/v1/forecasts",
        "/v1/forecasts/{forecast_id}/outcomes": "/v1/forecasts/1/outcomes",
        "/v1/series/{key}/dossier": f"/v1/series/{key}/dossier",
        "/v1/series": "/v1/series",
        "/v1/runs": "/v1/runs",
        "/v1/history/scores": "/v1/history/scores",
        "/v1/history/version-runs": "/v1/history/version-runs",
        "/v1/audit/events": "/v1/audit/events",
        "/v1/keys": "/v1/keys",
    }
    offered = {path for path, item in ledger.app.openapi()["paths"].items()
               for operation in item.values()
               if "text/csv" in operation.get("responses", {}).get("200", {})
               .get("content", {})}
    assert set(urls) == offered  # a new CSV route must join the walk

    cells = {}
    for path, url in urls.items():
        answer = ledger.get("admin" if path == "/v1/keys" else "auditor", url,
                            params={"format": "csv", **query.get(path, {})})
        assert answer.status_code == 200, (url, answer.text)
        cells[path] = _cells(answer.text)

    assert {path: _unsafe(found) for path, found in cells.items()} == dict.fromkeys(urls, [])
    # every table with a series-key column shows it neutralised; these have none (the audit
    # log names the series inside longer text, which starts with a word)
    assert [path for path, found in cells.items() if f"'{KEY}" not in found] == [
        "/v1/runs", "/v1/history/scores", "/v1/history/version-runs", "/v1/audit/events",
        "/v1/keys"]
    assert all(KEY not in found for found in cells.values())
    assert f"'{REASON}" in cells["/v1/champions"]
    errors = [row["error"] for row in csv.DictReader(io.StringIO(ledger.get(
        "reader", "/v1/forecasts/1/outcomes", params={"format": "csv"}).text))]
    assert errors and all(float(e) < 0 and e.startswith("-") for e in errors)


def test_every_csv_the_command_line_writes_neutralises_formulas(
        ledger: Api, tmp_path: Path, capsys: pytest.CaptureFixture[str]):
    store = ["--database-url", ledger.url]
    outputs = {}
    for name, args in {"forecast list": ["forecast", "list", "--csv"],
                       "forecast outcomes": ["forecast", "outcomes", "1", "--csv"]}.items():
        assert main([*args, *store]) == 0
        outputs[name] = _cells(capsys.readouterr().out)
    series = make_series(KEY, "P1M", [(p, -v) for p, v in zip(HOSTILE.labels(),
                                                                HOSTILE.values.tolist())])
    (tmp_path / "series.csv").write_text("series_key,period,value,frequency\n" + "".join(
        f"\"{KEY}\",{p},{v},P1M\n" for p, v in zip(series.labels(), series.values.tolist())))
    (tmp_path / "candidates.json").write_text(json.dumps([{"family": "benchmark",
                                                           "method": "naive"}]))
    (tmp_path / "plan.json").write_text(json.dumps({"horizon": 2, "max_origins": 3}))
    assert main(["backtest", str(tmp_path / "series.csv"), "--candidates",
                 str(tmp_path / "candidates.json"), "--plan", str(tmp_path / "plan.json"),
                 "--out", str(tmp_path / "out")]) == 0
    for name in ("folds.csv", "scores.csv", "ranking.csv"):
        outputs[name] = _cells((tmp_path / "out" / name).read_text())

    assert {name: _unsafe(found) for name, found in outputs.items()} == dict.fromkeys(outputs, [])
    assert [name for name, found in outputs.items() if f"'{KEY}" not in found] == []
    folds = list(csv.DictReader(io.StringIO((tmp_path / "out" / "folds.csv").read_text())))
    assert all(float(row["actual"]) < 0 and row["actual"].startswith("-") for row in folds)
