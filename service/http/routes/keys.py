"""API keys, for admins: create (the token is shown once), list, revoke."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Path, Request

from service.http.access import Caller, require
from service.http.app_state import Sessions
from service.http.flat_rows import flat_columns, flat_rows
from service.http.problems import problem_responses
from service.http.schemas.keys import KeyCreatedOut, KeyIn, KeyList, KeyOut
from service.http.tables import FormatParam, chosen_format, csv_openapi, csv_response
from service.usecases.keys import KeyInfo, all_keys, create_api_key, revoke_api_key

router = APIRouter(prefix="/v1/keys", tags=["keys"])
Admin = Annotated[Caller, Depends(require("manage_keys"))]
ERRORS = (401, 403, 422, 500, 503)


@router.post("", status_code=201, response_model=KeyCreatedOut,
             responses=problem_responses(*ERRORS, 409, 413))
def create(body: KeyIn, caller: Admin, sessions: Sessions) -> KeyCreatedOut:
    """Create a key; names are unique and never reused. A submitter key may be given a
    scope: the series-key prefix its team owns."""
    key, token = create_api_key(sessions, name=body.name, role=body.role, actor=caller.name,
                                scope=body.scope)
    return KeyCreatedOut(key=key_out(key), token=token.text)


@router.get("", response_model=KeyList,
            responses={**csv_openapi(flat_columns(KeyOut)), **problem_responses(*ERRORS, 406)})
def list_all(request: Request, caller: Admin, sessions: Sessions,
             output: FormatParam = None) -> Any:
    """Every key, revoked ones included."""
    chosen = chosen_format(request, output)
    items = [key_out(k) for k in all_keys(sessions)]
    if chosen == "csv":
        return csv_response(flat_rows(items), flat_columns(KeyOut), None)
    return KeyList(items=items)


@router.post("/{key_id}/revoke", response_model=KeyOut,
             responses=problem_responses(*ERRORS, 404))
def revoke(key_id: Annotated[str, Path(max_length=32)], caller: Admin,
           sessions: Sessions) -> KeyOut:
    """Revoke a key: requests with it are refused from now on."""
    return key_out(revoke_api_key(sessions, key_id, actor=caller.name))


def key_out(key: KeyInfo) -> KeyOut:
    """The public view of a key."""
    return KeyOut(id=key.id, name=key.name, role=key.role,
                  created_at=key.created_at, created_by=key.created_by,
                  revoked_at=key.revoked_at, revoked_by=key.revoked_by, scope=key.scope)
