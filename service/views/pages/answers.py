"""How page routes answer when they fail: a plain HTML page, never a problem document.

:class:`PageRoute` wraps each page handler. A request without a valid session is sent to
the sign-in page (303) and its stale cookie cleared; any other error becomes an HTML page
with the status the API would give it (:data:`service.http.problems.PROBLEMS`), and server-side
failures show a fixed text and are logged, as in the API.
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Coroutine
from typing import Any

from fastapi import Request, Response
from fastapi.exceptions import RequestValidationError
from fastapi.responses import HTMLResponse, RedirectResponse
from fastapi.routing import APIRoute

from service.errors import ServiceError
from service.http.problems import HIDDEN_DETAIL, kind_of
from service.views.pages.layout import SIGN_IN, error_page
from service.views.pages.reviewer import SignInRequired, end_session

log = logging.getLogger("foldline.pages")
Handler = Callable[[Request], Coroutine[Any, Any, Response]]


class PageRoute(APIRoute):
    """A route whose failures are answered as HTML pages."""

    def get_route_handler(self) -> Handler:
        handler = super().get_route_handler()

        async def answer(request: Request) -> Response:
            try:
                return await handler(request)
            except SignInRequired:
                redirect = RedirectResponse(SIGN_IN, status_code=303)
                end_session(redirect)
                return redirect
            except Exception as exc:  # every failure of a page is answered as a page
                return failure_page(request, exc)

        return answer


def failure_page(request: Request, exc: Exception) -> HTMLResponse:
    """The HTML page for an error raised while answering ``request``."""
    if isinstance(exc, RequestValidationError):
        bad = [e for e in exc.errors() if tuple(e.get("loc", ()))[:1] == ("query",)]
        if bad:  # e.g. a negative offset in a page link edited by hand
            fields = "; ".join(f"{e['loc'][-1]}: {e['msg']}" for e in bad)
            return _page(422, "Invalid address", f"The page address has a bad parameter "
                                                 f"({fields}).")
        # a path parameter that names no page
        return _page(404, "Not found", f"There is no page at {request.url.path}.")
    kind = kind_of(exc)
    if kind.status >= 500:
        log.error("%s %s failed: %s: %s", request.method, request.url.path,
                  type(exc).__name__, exc, exc_info=kind.title == "Internal error")
    if kind.hidden:
        return _page(kind.status, kind.title, HIDDEN_DETAIL[kind.status])
    detail = exc.detail if isinstance(exc, ServiceError) else " ".join(str(exc).split())
    return _page(kind.status, kind.title, detail)


def _page(status: int, title: str, detail: str) -> HTMLResponse:
    return HTMLResponse(error_page(status, title, detail), status_code=status)
