"""API keys: admins create (shown once), list and revoke them; the CLI does the same."""

from __future__ import annotations

import pytest
from sqlalchemy import text

from service.cli.main import main
from tests.service.conftest import Api
from tests.storage.builders import drop_guards


def _keys_cli(api: Api, *args: str) -> int:
    """``foldline keys ...`` through the console script's entry point."""
    return main(["keys", *args, "--database-url", api.url])


def test_an_admin_creates_a_key_that_works_at_once(api: Api):
    created = api.post("admin", "/v1/keys", json={"name": "bi-tool", "role": "reader"})

    token = created.json()["token"]
    assert created.status_code == 201
    assert created.json()["key"]["created_by"] == "admin"
    assert token.startswith(f"fl_{created.json()['key']['id']}.")
    assert api.client.get("/v1/series", headers={"Authorization": f"Bearer {token}"}
                          ).status_code == 200


def test_listing_keys_never_shows_a_secret(api: Api):
    listed = api.get("admin", "/v1/keys")

    assert [k["name"] for k in listed.json()["items"]] == ["submitter", "reader", "auditor",
                                                           "admin"]
    assert all(token.split(".")[1] not in listed.text for token in api.tokens.values())


def test_a_revoked_key_stops_working_and_stays_listed(api: Api):
    created = api.post("admin", "/v1/keys", json={"name": "temp", "role": "submitter"}).json()

    revoked = api.post("admin", f"/v1/keys/{created['key']['id']}/revoke")
    refused = api.client.get("/v1/series",
                             headers={"Authorization": f"Bearer {created['token']}"})

    assert revoked.json()["revoked_by"] == "admin"
    assert refused.status_code == 401
    listed = {k["name"]: k for k in api.get("admin", "/v1/keys").json()["items"]}
    assert listed["temp"]["revoked_at"] is not None


@pytest.mark.parametrize(("body", "status"), [
    ({"name": "reader", "role": "reader"}, 409), ({"name": "x", "role": "owner"}, 422),
    ({"name": "has space", "role": "reader"}, 422), ({"name": "x"}, 422)])
def test_bad_key_requests_are_refused(api: Api, body, status):
    assert api.post("admin", "/v1/keys", json=body).status_code == status
    assert len(api.get("admin", "/v1/keys").json()["items"]) == 4


def test_the_command_line_creates_lists_and_revokes(api: Api,
                                                    capsys: pytest.CaptureFixture[str]):
    assert _keys_cli(api, "create", "--role", "auditor", "--name", "ext-audit") == 0
    token = capsys.readouterr().out.strip()
    works = api.client.get("/v1/audit/events", headers={"Authorization": f"Bearer {token}"})
    assert works.status_code == 200

    assert _keys_cli(api, "list") == 0
    listing = capsys.readouterr().out
    key_id = token[3:15]
    assert f"{key_id}  auditor    ext-audit" in listing and token[16:] not in listing

    assert _keys_cli(api, "revoke", key_id) == 0
    assert api.client.get("/v1/audit/events", headers={"Authorization": f"Bearer {token}"}
                          ).status_code == 401


def test_the_command_line_reports_errors_on_one_line(api: Api,
                                                     capsys: pytest.CaptureFixture[str]):
    assert _keys_cli(api, "create", "--role", "reader", "--name", "admin") == 2
    assert _keys_cli(api, "revoke", "nosuchkey") == 2

    errors = capsys.readouterr().err.strip().splitlines()
    assert len(errors) == 2 and all(e.startswith("foldline: error: ") for e in errors)


def test_the_last_admin_key_cannot_be_revoked(api: Api):
    own_id = api.tokens["admin"].removeprefix("fl_").split(".")[0]

    refused = api.post("admin", f"/v1/keys/{own_id}/revoke")
    second = api.post("admin", "/v1/keys", json={"name": "ops-2", "role": "admin"}).json()
    allowed = api.post("admin", f"/v1/keys/{own_id}/revoke")

    assert refused.status_code == 409 and "last active admin" in refused.json()["detail"]
    assert allowed.status_code == 200
    assert api.client.post(f"/v1/keys/{second['key']['id']}/revoke", headers={
        "Authorization": f"Bearer {second['token']}"}).status_code == 409


def test_a_key_promoted_behind_the_api_is_refused(api: Api):
    reader_id = api.tokens["reader"].removeprefix("fl_").split(".")[0]
    assert api.get("reader", "/v1/series").status_code == 200
    with api.sessions.begin() as session:
        drop_guards(session, "api_key")
        session.execute(text(f"UPDATE api_key SET role = 'admin' WHERE id = '{reader_id}'"))

    refused = api.get("reader", "/v1/keys")

    assert refused.status_code == 401
    assert "audit record" in refused.json()["detail"]
    assert api.get("reader", "/v1/series").status_code == 401
