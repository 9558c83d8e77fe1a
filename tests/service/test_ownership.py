"""Ownership: a submitter key's scope (the series-key prefix its team owns) bounds every
write and cancel; readers and auditors stay global; the scope is listed and audited."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import func, select

from storage.db import ApiKey, Run, SeriesRecord
from tests.service.conftest import CANDIDATES, PLAN, Api, series_body
from tests.storage.builders import monthly_series

NORTH, SOUTH = "sales/north/berlin", "sales/south/rome"


@pytest.fixture
def teams(api: Api) -> Api:
    """Keys ``north``, ``north-2`` (one team), ``south``; a series of each team."""
    for name, scope in (("north", "sales/north"), ("north-2", "sales/north/"),
                        ("south", "sales/south/")):
        made = api.post("admin", "/v1/keys",
                        json={"name": name, "role": "submitter", "scope": scope})
        assert made.status_code == 201, made.text
        api.tokens[name] = made.json()["token"]
    assert _post(api, "north", NORTH).status_code == 201
    assert _post(api, "south", SOUTH).status_code == 201
    return api


def _post(api: Api, role: str, key: str, **fields):
    return api.post(role, "/v1/series", json={**series_body(monthly_series(key)), **fields})


def _submit(api: Api, role: str, selection: dict):
    return api.post(role, "/v1/runs",
                    json={"series": selection, "candidates": CANDIDATES, "plan": PLAN})


def _count(api: Api, model) -> int:
    with api.sessions.begin() as session:
        return session.scalar(select(func.count()).select_from(model))


def test_a_scope_is_normalised_listed_and_shown_in_the_audit(teams: Api):
    listed = {k["name"]: k["scope"] for k in teams.get("admin", "/v1/keys").json()["items"]}
    events = teams.get("auditor", "/v1/audit/events").json()["items"]
    created = {e["subject_label"] for e in events if e["action"] == "api_key.created"}

    assert listed["north"] == listed["north-2"] == "sales/north/"
    assert listed["south"] == "sales/south/" and listed["reader"] is None
    assert "API key north (submitter, scope sales/north/)" in created
    assert "API key reader (reader, global)" in created
    csv = teams.get("admin", "/v1/keys?format=csv").text
    assert "scope" in csv.splitlines()[0] and "sales/south/" in csv


@pytest.mark.parametrize("role", ["reader", "auditor", "admin"])
def test_readers_auditors_and_admins_are_global_and_refuse_a_scope(api: Api, role: str):
    before = _count(api, ApiKey)

    refused = api.post("admin", "/v1/keys",
                       json={"name": f"scoped-{role}", "role": role, "scope": "sales/"})

    assert refused.status_code == 422
    assert refused.json()["errors"][0]["pointer"] == "/scope"
    assert "global" in refused.json()["detail"]
    assert _count(api, ApiKey) == before


@pytest.mark.parametrize("scope", ["a//b", "../x", "sales/champion/", "/", " x", "a" * 200,
                                   "x\u202e/"])
def test_a_scope_is_a_series_key_prefix(api: Api, scope: str):
    refused = api.post("admin", "/v1/keys",
                       json={"name": "odd", "role": "submitter", "scope": scope})

    assert refused.status_code == 422, refused.text
    assert refused.json()["errors"][0]["pointer"] == "/scope"


def test_readers_and_auditors_read_every_team_s_series(teams: Api):
    keys = {s["key"] for s in teams.get("reader", "/v1/series").json()["items"]}
    actors = {e["actor"] for e in teams.get("auditor", "/v1/audit/events").json()["items"]}

    assert {NORTH, SOUTH} <= keys
    assert {"north", "south"} <= actors
    assert teams.get("reader", f"/v1/series/{SOUTH}").status_code == 200


@pytest.mark.parametrize("key", [SOUTH, "sales/northwest/x", "sales/north", "other"])
def test_a_scoped_key_posts_no_series_outside_its_scope(teams: Api, key: str):
    before = _count(teams, SeriesRecord)

    refused = _post(teams, "north", key)

    assert refused.status_code == 403
    assert refused.json()["code"] == "permission_denied"
    assert "sales/north/" in refused.json()["detail"]
    assert _count(teams, SeriesRecord) == before


def test_a_scoped_key_writes_inside_its_scope(teams: Api):
    assert _post(teams, "north-2", "sales/north/paris").status_code == 201
    appended = teams.post("north-2", f"/v1/series/{NORTH}/observations",
                          json={"observations": [{"period": "2023-01", "value": 1.0}]})
    assert appended.status_code == 201
    assert _submit(teams, "north", {"keys": [NORTH, "sales/north/paris"]}).status_code == 202


def test_a_scoped_key_appends_uploads_and_submits_nothing_outside(teams: Api):
    versions = teams.get("reader", f"/v1/series/{SOUTH}").json()["versions"]

    appended = teams.post("north", f"/v1/series/{SOUTH}/observations",
                          json={"observations": [{"period": "2023-01", "value": 1.0}]})
    csv = ("series_key,period,value,frequency\nsales/north/a,2024-01,1,P1M\n"
           "sales/north/a,2024-02,2,P1M\nsales/south/b,2024-01,1,P1M\n"
           "sales/south/b,2024-02,2,P1M\n")
    uploaded = teams.post("north", "/v1/series/upload", content=csv,
                          headers={"Content-Type": "text/csv"})
    by_keys = _submit(teams, "north", {"keys": [NORTH, SOUTH]})

    assert [r.status_code for r in (appended, uploaded, by_keys)] == [403, 403, 403]
    assert teams.get("reader", f"/v1/series/{SOUTH}").json()["versions"] == versions
    assert teams.get("reader", "/v1/series/sales/north/a").status_code == 404
    assert _count(teams, Run) == 0


def test_a_tag_selection_reaching_outside_the_scope_is_refused(teams: Api):
    assert _post(teams, "north", "sales/north/tagged", tags={"region": "eu"}).status_code \
        == 201
    assert _post(teams, "south", "sales/south/tagged", tags={"region": "eu"}).status_code \
        == 201

    refused = _submit(teams, "north", {"tags": {"region": "eu"}})

    assert refused.status_code == 403
    assert "sales/south/tagged" in refused.json()["detail"]
    assert _count(teams, Run) == 0


def test_champions_and_forecasts_of_another_team_are_refused(teams: Api):
    run = _submit(teams, "south", {"keys": [SOUTH]}).json()
    teams.complete(run["id"])
    candidate = run["candidate_ids"][0]
    body = {"candidate_id": candidate, "run_id": run["id"], "reason": "best in the backtest"}

    refused_champion = teams.post("north", f"/v1/series/{SOUTH}/champion", json=body)
    chosen = teams.post("south", f"/v1/series/{SOUTH}/champion", json=body)
    refused_forecast = teams.post("north", "/v1/forecasts",
                                  json={"series_key": SOUTH, "horizon": 2})
    issued = teams.post("south", "/v1/forecasts", json={"series_key": SOUTH, "horizon": 2})

    assert (refused_champion.status_code, chosen.status_code) == (403, 201)
    assert (refused_forecast.status_code, issued.status_code) == (403, 201)
    history = teams.get("reader", f"/v1/series/{SOUTH}/champion/history").json()["items"]
    assert [c["chosen_by"] for c in history] == ["south"]


def test_who_may_cancel_a_run(teams: Api):
    runs = [_submit(teams, "north", {"keys": [NORTH]}).json()["url"] for _ in range(4)]

    refused = teams.post("south", f"{runs[0]}/cancel")
    assert refused.status_code == 403 and "sales/south/" in refused.json()["detail"]
    assert teams.get("reader", runs[0]).json()["status"] == "queued"
    assert teams.post("reader", f"{runs[0]}/cancel").status_code == 403
    assert teams.post("north", f"{runs[0]}/cancel").status_code == 200  # its own
    assert teams.post("north-2", f"{runs[1]}/cancel").status_code == 200  # its team's
    assert teams.post("admin", f"{runs[2]}/cancel").status_code == 200  # admins: any run
    assert teams.post("submitter", f"{runs[3]}/cancel").status_code == 200  # a global key
    statuses = [teams.get("reader", url).json() for url in runs]
    assert [s["status"] for s in statuses] == ["cancelled"] * 4


def test_a_run_over_two_teams_is_cancelled_by_neither_team(teams: Api):
    run = _submit(teams, "submitter", {"keys": [NORTH, SOUTH]}).json()["url"]

    assert teams.post("north", f"{run}/cancel").status_code == 403
    assert teams.post("south", f"{run}/cancel").status_code == 403
    assert teams.post("submitter", f"{run}/cancel").status_code == 200


def test_the_cli_makes_and_lists_scoped_keys(api: Api, tmp_path: Path):
    def cli(*args: str) -> subprocess.CompletedProcess:
        return subprocess.run([sys.executable, "-m", "service.cli.main", "keys", *args,
                               "--database-url", api.url], capture_output=True, text=True,
                              timeout=120)

    made = cli("create", "--role", "submitter", "--name", "east", "--scope", "sales/east")
    refused = cli("create", "--role", "reader", "--name", "east-bi", "--scope", "sales/east")
    listed = cli("list")

    assert made.returncode == 0 and made.stdout.startswith("fl_")
    assert "scope sales/east/" in made.stderr
    assert refused.returncode == 2 and refused.stdout == ""
    assert refused.stderr.count("\n") == 1 and "takes no scope" in refused.stderr
    east = next(line for line in listed.stdout.splitlines() if "  east  " in line)
    assert "scope sales/east/" in east
    assert "global" in next(line for line in listed.stdout.splitlines() if "  reader  " in line)
    token = made.stdout.strip()
    outside = api.client.post("/v1/series", headers={"Authorization": f"Bearer {token}"},
                              json=series_body(monthly_series("sales/west/x")))
    assert outside.status_code == 403
