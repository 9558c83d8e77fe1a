"""Who is reading: signing in with an API key, and the signed-in reviewer of each request.

Signing in checks the key exactly as the API checks a bearer key
(:func:`service.http.access.authenticate`). Every page request then re-reads the key named by the
session cookie, so a revoked key's sessions end at once. Any role that may read gets in.
"""

from __future__ import annotations

import time

from fastapi import Request, Response
from fastapi.security import HTTPAuthorizationCredentials
from sqlalchemy.orm import Session, sessionmaker

from service.http.access import Caller, authenticate
from service.http.app_state import AppSettings, Sessions
from service.settings import Settings
from service.usecases.transactions import write
from service.views.pages.session import (
    COOKIE,
    COOKIE_PATH,
    session_key_id,
    session_secret,
    session_value,
)
from storage.access import find_credentials, record_sign_out, signed_out


class SignInRequired(Exception):
    """The request has no valid session: the browser is sent to the sign-in page."""


def sign_in(sessions: sessionmaker[Session], key_text: str) -> Caller:
    """The caller the key belongs to; raise ``NotAuthenticatedError`` for a malformed,
    unknown or revoked key."""
    return authenticate(sessions, HTTPAuthorizationCredentials(scheme="Bearer",
                                                               credentials=key_text))


def start_session(response: Response, caller: Caller, settings: Settings) -> None:
    """Set the session cookie on ``response``."""
    lifetime = settings.session_minutes * 60
    value = session_value(caller.key_id, int(time.time()) + lifetime,
                          session_secret(settings.session_secret))
    response.set_cookie(COOKIE, value, max_age=lifetime, path=COOKIE_PATH, secure=True,
                        httponly=True, samesite="strict")


def end_session(response: Response) -> None:
    """Clear the session cookie."""
    response.delete_cookie(COOKIE, path=COOKIE_PATH, secure=True, httponly=True,
                           samesite="strict")


def sign_out_on_server(request: Request, sessions: sessionmaker[Session],
                       settings: Settings) -> None:
    """Record the request's session, if it has a valid one, as ended, so that a copy of its
    cookie is refused too."""
    cookie = request.cookies.get(COOKIE, "")
    key_id = session_key_id(cookie, session_secret(settings.session_secret), time.time())
    if key_id is not None:
        write(sessions, lambda session: record_sign_out(session, cookie, key_id))


def reviewer(request: Request, sessions: Sessions, settings: AppSettings) -> Caller:
    """The signed-in reader of a page request (a dependency); raise :class:`SignInRequired`
    if there is none."""
    cookie = request.cookies.get(COOKIE, "")
    key_id = session_key_id(cookie, session_secret(settings.session_secret), time.time())
    if key_id is None:
        raise SignInRequired
    with sessions.begin() as session:
        stored = find_credentials(session, key_id)
        ended = signed_out(session, cookie)
    if ended or stored is None or not stored.key.active or not stored.audited:
        raise SignInRequired
    caller = Caller(stored.key.id, stored.key.name, stored.key.role)
    if not caller.may("read"):
        raise SignInRequired
    return caller
