"""Who may do what: API keys sent as bearer tokens, and the permissions of each role.

=========  ============================================================================
role       may
=========  ============================================================================
reader     read series, runs, results, rankings, champions, the forecast ledger, outcomes
           and monitoring (what a BI tool gets)
submitter  what a reader may, and post series, submit and cancel runs, choose champions
           and issue forecasts, inside its scope if it has one
auditor    what a reader may, and read score history, provenance, the audit log and its
           verification; never write
admin      what a reader may, and create, list and revoke API keys, and cancel any run
=========  ============================================================================

A submitter key may carry a scope, the series-key prefix its team owns; which writes and
cancels it allows is :mod:`service.usecases.ownership`'s business.

Every route declares one permission with :func:`require`. A missing, malformed, unknown or
revoked key is answered 401, a key whose role lacks the permission 403. Keys are never
logged or echoed: problem details name the key id at most.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Annotated, Literal

from fastapi import Depends
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer

from service.errors import NotAuthenticatedError, PermissionDeniedError
from service.http.app_state import Sessions
from service.usecases.keys import authenticated_key

Permission = Literal["read", "write", "cancel", "audit", "manage_keys"]
GRANTS: dict[str, frozenset[Permission]] = {
    "reader": frozenset({"read"}),
    "submitter": frozenset({"read", "write", "cancel"}),
    "auditor": frozenset({"read", "audit"}),
    "admin": frozenset({"read", "cancel", "manage_keys"}),
}

_bearer = HTTPBearer(auto_error=False, bearerFormat="fl_<key id>.<secret>",
                     description="An API key made with `foldline keys create` or POST /v1/keys")


@dataclass(frozen=True)
class Caller:
    """The holder of the API key a request was made with."""

    key_id: str
    name: str
    role: str
    scope: str | None = None

    def may(self, permission: Permission) -> bool:
        return permission in GRANTS[self.role]


def authenticate(sessions: Sessions, credentials: Annotated[
        HTTPAuthorizationCredentials | None, Depends(_bearer)]) -> Caller:
    """The caller named by the request's bearer token; raise 401 if there is none."""
    if credentials is None:
        raise NotAuthenticatedError("send an API key as 'Authorization: Bearer <key>'")
    key = authenticated_key(sessions, credentials.credentials)
    return Caller(key.id, key.name, key.role, key.scope)


def require(permission: Permission) -> Callable[..., Caller]:
    """A dependency giving the authenticated caller if their role has ``permission``."""

    def check(caller: Annotated[Caller, Depends(authenticate)]) -> Caller:
        if not caller.may(permission):
            raise PermissionDeniedError(f"role {caller.role!r} may not {_ACTIONS[permission]}")
        return caller

    check.permission = permission  # type: ignore[attr-defined]  # read by the access-matrix test
    return check


_ACTIONS: dict[Permission, str] = {
    "read": "read series, runs or results",
    "write": "post series, submit runs, choose champions or issue forecasts",
    "cancel": "cancel runs",
    "audit": "read audit history",
    "manage_keys": "manage API keys",
}
