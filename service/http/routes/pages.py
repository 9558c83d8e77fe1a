"""Reviewer pages: sign in and out, the series list, a series, and a run's report.

The pages are HTML rendered here, readable without JavaScript and left out of the API
document. A browser signs in by posting an API key in a form (never in the URL) and then
carries a session cookie (:mod:`service.views.pages.session`); pages without a valid session
send it back to the sign-in form.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Annotated, Literal
from urllib.parse import parse_qs, urlsplit

from fastapi import APIRouter, Depends, Query, Request
from fastapi.responses import HTMLResponse, RedirectResponse
from starlette.concurrency import run_in_threadpool

from service.errors import NotAuthenticatedError
from service.http.access import Caller
from service.http.app_state import AppSettings, Sessions
from service.http.routes.params import Id
from service.http.routes.reports import report_response
from service.limits import MAX_ID
from service.settings import Settings
from service.views.pages.answers import PageRoute
from service.views.pages.forecast_detail import forecast_detail
from service.views.pages.forecast_view import load_forecast_page
from service.views.pages.layout import HOME, SIGN_IN, reviewer_page, sign_in_page, with_navigation
from service.views.pages.ledger_section import ledger_section
from service.views.pages.ledger_view import load_ledger
from service.views.pages.reviewer import (
    end_session,
    reviewer,
    sign_in,
    sign_out_on_server,
    start_session,
)
from service.views.pages.series_detail import load_series_page, series_detail
from service.views.pages.series_list import STATES, series_list
from service.views.pages.session import (
    SIGN_IN_COOKIE,
    SIGN_IN_COOKIE_SECONDS,
    session_secret,
    sign_in_nonce,
    sign_in_token,
    sign_in_token_matches,
)
from service.views.report.html import join
from service.views.report.prerender import settings_report_cache
from service.views.report.stored import stored_run_report

router = APIRouter(prefix="/pages", route_class=PageRoute, include_in_schema=False)
#: Page answers load nothing from elsewhere and run no script; no other site may frame them.
PAGE_HEADERS = {"Content-Security-Policy": "default-src 'none'; style-src 'unsafe-inline'; "
                                           "form-action 'self'; frame-ancestors 'none'",
                "X-Content-Type-Options": "nosniff", "Cache-Control": "no-store",
                "Referrer-Policy": "no-referrer"}


Reviewer = Annotated[Caller, Depends(reviewer)]
#: A monitoring state of the series list, or "" (the form's "any").
if TYPE_CHECKING:  # the checker cannot read a Literal made from a runtime tuple
    MonitoringState = str
else:
    MonitoringState = Literal[("", *STATES)]


async def posted_form(request: Request) -> dict[str, str]:
    """The first value of each field of a posted form."""
    fields = parse_qs((await request.body()).decode("utf-8", errors="replace"),
                      max_num_fields=10)
    return {name: values[0] for name, values in fields.items()}


def same_origin(request: Request) -> bool:
    """Whether the request comes from this site's own pages. A browser's ``Sec-Fetch-Site``
    says so directly (the pages' no-referrer policy makes it send ``Origin: null`` on its
    own form posts); without it, the ``Origin``, when sent, must name this host."""
    fetch_site = request.headers.get("sec-fetch-site")
    if fetch_site is not None:
        return fetch_site in ("same-origin", "none")
    origin = request.headers.get("origin")
    return origin is None or urlsplit(origin).netloc == request.headers.get("host")


def _page(html: str, status: int = 200) -> HTMLResponse:
    return HTMLResponse(html, status_code=status, headers=PAGE_HEADERS)


def _sign_in_form(request: Request, settings: Settings, message: str | None = None,
                  status: int = 200) -> HTMLResponse:
    """The sign-in form with its CSRF token, and the pre-session cookie the token is bound
    to (the browser's own nonce is kept, so several open forms all stay valid)."""
    nonce = sign_in_nonce(request.cookies.get(SIGN_IN_COOKIE))
    token = sign_in_token(nonce, session_secret(settings.session_secret))
    answer = _page(sign_in_page(token, message), status)
    answer.set_cookie(SIGN_IN_COOKIE, nonce, max_age=SIGN_IN_COOKIE_SECONDS, path=SIGN_IN,
                      secure=True, httponly=True, samesite="strict")
    return answer


@router.get("/sign-in")
def sign_in_form(request: Request, settings: AppSettings) -> HTMLResponse:
    """The sign-in form."""
    return _sign_in_form(request, settings)


@router.post("/sign-in", response_model=None)
async def sign_in_with_key(request: Request, form: Annotated[dict[str, str], Depends(posted_form)],
                           sessions: Sessions,
                           settings: AppSettings) -> HTMLResponse | RedirectResponse:
    """Check the posted key as the API would; on success start a session and go home.

    A form posted from another site (its fetch metadata or ``Origin`` says so), or without
    the CSRF token of this browser's pre-session cookie, is refused, so no page elsewhere
    can sign a browser in under someone else's key (login CSRF)."""
    if not same_origin(request):
        return _sign_in_form(request, settings, "Sign in from this site's own form.", 403)
    if not sign_in_token_matches(request.cookies.get(SIGN_IN_COOKIE), form.get("csrf", ""),
                                 session_secret(settings.session_secret)):
        return _sign_in_form(request, settings, "The sign-in form had expired or did not "
                             "come from this site: please sign in again.", 403)
    key = form.get("key", "").strip()
    if not key:
        return _sign_in_form(request, settings, "Enter your API key.", 400)
    try:
        caller = await run_in_threadpool(sign_in, sessions, key)
    except NotAuthenticatedError:
        return _sign_in_form(request, settings, "That key is not a valid API key, or it has "
                             "been revoked.", 401)
    home = RedirectResponse(HOME, status_code=303)
    start_session(home, caller, settings)
    return home


@router.post("/sign-out")
def sign_out(request: Request, sessions: Sessions, settings: AppSettings) -> RedirectResponse:
    """End the session on the server and clear its cookie."""
    sign_out_on_server(request, sessions, settings)
    page = RedirectResponse(SIGN_IN, status_code=303)
    end_session(page)
    return page


@router.get("/")
def series_index(caller: Reviewer, sessions: Sessions,
                 prefix: Annotated[str | None, Query(max_length=200)] = None,
                 offset: Annotated[int, Query(ge=0, le=MAX_ID)] = 0,
                 state: Annotated[MonitoringState | None, Query()] = None
                 ) -> HTMLResponse:
    """Every series with its latest run's top candidate, score, champion and monitoring
    state, a page at a time, optionally only the keys starting with ``prefix`` and only
    the series in monitoring ``state``."""
    with sessions.begin() as session:
        body = series_list(session, prefix=prefix or None, offset=offset,
                           state=state or None)
    return _page(reviewer_page("All series", caller, body))


@router.get("/series/{key:path}")
def series_page(key: str, caller: Reviewer, sessions: Sessions) -> HTMLResponse:
    """A series: versions, runs, the latest ranking with its charts, and its forecast
    ledger (champion, issued forecasts, outcomes, monitoring)."""
    with sessions.begin() as session:
        page = load_series_page(session, key)
        ledger = load_ledger(session, key)
    body = join([series_detail(page), ledger_section(ledger)])
    return _page(reviewer_page(f"Series {key}", caller, body))


@router.get("/forecasts/{forecast_id}")
def forecast_page(forecast_id: Id, caller: Reviewer, sessions: Sessions,
                  history: Annotated[int | None, Query(ge=0, le=100_000)] = None
                  ) -> HTMLResponse:
    """An issued forecast: what it was fitted on, its steps beside the actuals, every outcome
    set and a fan chart with ``history`` periods before the origin (default: in proportion
    to the horizon; 0: all)."""
    with sessions.begin() as session:
        view = load_forecast_page(session, forecast_id)
    return _page(reviewer_page(f"Forecast {forecast_id}", caller,
                               forecast_detail(view, history)))


@router.get("/runs/{run_id}")
def run_page(run_id: Id, caller: Reviewer, sessions: Sessions,
             settings: AppSettings) -> HTMLResponse:
    """A run's report, with the page navigation on top."""
    report = stored_run_report(sessions, run_id, settings_report_cache(settings))
    answer = report_response(with_navigation(report, caller))
    answer.headers.update(PAGE_HEADERS)
    return answer
