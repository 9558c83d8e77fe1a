"""Access: every endpoint against every role and no key; keys are hashes and never echoed."""

from __future__ import annotations

import logging
from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.routing import APIRoute
from sqlalchemy import select

from service.http.access import GRANTS
from service.http.app import ROUTERS
from service.usecases.key_tokens import new_token, parse_token, secret_hash, secret_matches
from storage.access import revoke_key
from storage.db import ROLES, ApiKey
from tests.service.conftest import Api, copied_store, series_body, serving
from tests.storage.builders import monthly_series

SERIES = series_body(monthly_series("m"))
RUN = {"series": {"keys": ["m"]}, "candidates": [{"family": "benchmark", "method": "naive"}],
       "plan": {"horizon": 2, "max_origins": 2}}
CSV = "series_key,period,value,frequency\nc,2024-01,1,P1M\nc,2024-02,2,P1M\n"
# (method, route path, a concrete URL, what the route needs, request options)
ENDPOINTS = [
    ("POST", "/v1/series", "/v1/series", "write", {"json": SERIES}),
    ("POST", "/v1/series/upload", "/v1/series/upload", "write",
     {"content": CSV, "headers": {"Content-Type": "text/csv"}}),
    ("GET", "/v1/series", "/v1/series", "read", {}),
    ("GET", "/v1/series/{key:path}/versions/{number}", "/v1/series/m/versions/1", "read", {}),
    ("POST", "/v1/series/{key:path}/observations", "/v1/series/m/observations", "write",
     {"json": {"observations": [{"period": "2023-01", "value": 1.0}]}}),
    ("GET", "/v1/series/{key:path}/dossier", "/v1/series/m/dossier", "read", {}),
    ("GET", "/v1/series/{key:path}", "/v1/series/m", "read", {}),
    ("POST", "/v1/runs", "/v1/runs", "write", {"json": RUN}),
    ("GET", "/v1/runs", "/v1/runs", "read", {}),
    ("GET", "/v1/runs/{run_id}", "/v1/runs/1", "read", {}),
    ("POST", "/v1/runs/{run_id}/cancel", "/v1/runs/1/cancel", "write", {}),
    ("GET", "/v1/runs/{run_id}/scores", "/v1/runs/1/scores", "read", {}),
    ("GET", "/v1/runs/{run_id}/folds", "/v1/runs/1/folds", "read", {}),
    ("GET", "/v1/runs/{run_id}/ranking", "/v1/runs/1/ranking", "read", {}),
    ("GET", "/v1/runs/{run_id}/diagnostics", "/v1/runs/1/diagnostics", "read", {}),
    ("GET", "/v1/runs/{run_id}/evidence", "/v1/runs/1/evidence", "read", {}),
    ("GET", "/v1/runs/{run_id}/report", "/v1/runs/1/report", "read", {}),
    ("GET", "/v1/rankings", "/v1/rankings", "read", {}),
    ("POST", "/v1/series/{key:path}/champion", "/v1/series/m/champion", "write",
     {"json": {"candidate_id": "c0123456789abcdef", "run_id": 1, "reason": "x"}}),
    ("GET", "/v1/series/{key:path}/champion", "/v1/series/m/champion", "read", {}),
    ("GET", "/v1/series/{key:path}/champion/history", "/v1/series/m/champion/history",
     "read", {}),
    ("GET", "/v1/champions", "/v1/champions", "read", {}),
    ("GET", "/v1/runs/{run_id}/champion-suggestions", "/v1/runs/1/champion-suggestions",
     "read", {}),
    ("POST", "/v1/forecasts", "/v1/forecasts", "write",
     {"json": {"series_key": "m", "horizon": 2}}),
    ("GET", "/v1/forecasts", "/v1/forecasts", "read", {}),
    ("GET", "/v1/forecasts/{forecast_id}", "/v1/forecasts/1", "read", {}),
    ("GET", "/v1/forecasts/{forecast_id}/outcomes", "/v1/forecasts/1/outcomes", "read", {}),
    ("GET", "/v1/series/{key:path}/monitoring", "/v1/series/m/monitoring", "read", {}),
    ("GET", "/v1/monitoring", "/v1/monitoring", "read", {}),
    ("GET", "/v1/history/scores", "/v1/history/scores?series_key=m&candidate_id=c1",
     "audit", {}),
    ("GET", "/v1/history/version-runs", "/v1/history/version-runs?series_key=m&version=1",
     "audit", {}),
    ("GET", "/v1/audit/events", "/v1/audit/events", "audit", {}),
    ("GET", "/v1/audit/verification", "/v1/audit/verification", "audit", {}),
    ("POST", "/v1/keys", "/v1/keys", "manage_keys", {"json": {"name": "x", "role": "reader"}}),
    ("GET", "/v1/keys", "/v1/keys", "manage_keys", {}),
    ("POST", "/v1/keys/{key_id}/revoke", "/v1/keys/aaaaaaaaaaaa/revoke", "manage_keys", {}),
    ("GET", "/health/live", "/health/live", None, {}),
    ("GET", "/health/ready", "/health/ready", None, {}),
    ("GET", "/metrics", "/metrics", None, {}),
]


@pytest.fixture(scope="module")
def stocked(sqlite_template: Path, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Api]:
    """A series ``m`` and a run 1 on it, shared by the matrix: what a request changes (a run
    cancelled, a key created) does not change who may make it."""
    with serving(copied_store(sqlite_template, tmp_path_factory.mktemp("matrix"))) as api:
        assert api.post("submitter", "/v1/series", json=SERIES).status_code == 201
        assert api.post("submitter", "/v1/runs", json=RUN).json()["id"] == 1
        yield api


def test_the_matrix_lists_every_operation_the_app_serves(api: Api):
    served = {(method.upper(), path) for path, operations in api.app.openapi()["paths"].items()
              for method in operations}

    assert served == {(method, path.replace(":path", "")) for method, path, *_ in ENDPOINTS}


def test_every_route_declares_the_permission_the_matrix_expects():
    declared = {}
    for route in (r for router in ROUTERS for r in router.routes if isinstance(r, APIRoute)):
        checks = [d.call for d in route.dependant.dependencies if hasattr(d.call, "permission")]
        for method in route.methods:
            declared[method, route.path] = checks[0].permission if checks else None

    assert declared == {(method, path): needs for method, path, _, needs, _ in ENDPOINTS}


@pytest.mark.parametrize(("method", "url", "needs", "options"),
                         [(m, u, n, o) for m, _, u, n, o in ENDPOINTS],
                         ids=[f"{m} {p}" for m, p, *_ in ENDPOINTS])
def test_each_role_and_no_key_is_allowed_or_refused(stocked: Api, method, url, needs, options):
    for caller in (None, *ROLES):
        response = stocked.request(caller, method, url, **options)
        allowed = needs is None or (caller is not None and needs in GRANTS[caller])
        if allowed:
            assert response.status_code not in (401, 403), (caller, response.text)
            assert response.status_code < 500, (caller, response.text)
        else:
            assert response.status_code == (401 if caller is None else 403), caller
            assert response.headers["content-type"] == "application/problem+json"
        if response.status_code == 401:
            assert response.headers["www-authenticate"] == "Bearer"


def test_roles_grant_what_the_access_rules_say():
    assert set(GRANTS) == set(ROLES)
    assert GRANTS["reader"] == {"read"}
    assert GRANTS["submitter"] == {"read", "write"}
    assert GRANTS["auditor"] == {"read", "audit"}
    assert GRANTS["admin"] == {"read", "manage_keys"}


@pytest.mark.parametrize("authorization", [
    "Bearer not-a-key", "Basic dXNlcjpwYXNz", "Bearer fl_aaaaaaaaaaaa." + "x" * 43, "Bearer"])
def test_a_malformed_or_unknown_key_is_refused(api: Api, authorization):
    response = api.client.get("/v1/series", headers={"Authorization": authorization})

    assert response.status_code == 401
    assert response.json()["code"] == "not_authenticated"


def test_a_real_key_id_with_a_wrong_secret_is_refused(api: Api):
    key_id = parse_token(api.tokens["reader"]).key_id
    forged = f"fl_{key_id}.{new_token().secret}"

    response = api.client.get("/v1/series", headers={"Authorization": f"Bearer {forged}"})

    assert response.status_code == 401


def test_a_revoked_key_is_refused_from_then_on(api: Api):
    assert api.get("reader", "/v1/series").status_code == 200
    with api.sessions.begin() as session:
        revoke_key(session, parse_token(api.tokens["reader"]).key_id, actor="test")

    response = api.get("reader", "/v1/series")

    assert response.status_code == 401
    assert "revoked" in response.json()["detail"]


def test_keys_are_stored_as_hashes_and_never_echoed_or_logged(api: Api, tmp_path: Path,
                                                              caplog: pytest.LogCaptureFixture):
    token = parse_token(api.tokens["reader"])
    with api.sessions.begin() as session:
        stored = session.scalars(select(ApiKey.secret_hash).where(ApiKey.id == token.key_id))
        assert stored.one() == secret_hash(token.secret)
    forged = f"fl_{token.key_id}.{new_token().secret}"

    with caplog.at_level(logging.DEBUG):
        refused = api.client.get("/v1/series", headers={"Authorization": f"Bearer {forged}"})
        api.get("reader", "/v1/audit/events")

    assert forged not in refused.text and token.secret not in refused.text
    assert token.secret not in caplog.text and forged not in caplog.text
    database_bytes = b"".join(p.read_bytes() for p in tmp_path.glob("foldline.db*"))
    assert token.secret.encode() not in database_bytes
    assert secret_hash(token.secret).encode() in database_bytes


def test_secrets_match_only_their_own_hash():
    token = new_token()

    assert secret_matches(token.secret, secret_hash(token.secret))
    assert not secret_matches(new_token().secret, secret_hash(token.secret))
    assert not secret_matches(token.secret, None)
    assert parse_token(token.text) == token
