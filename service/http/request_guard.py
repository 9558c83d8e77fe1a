"""Refusing NUL characters in a request's path or query before any handler sees them.

No stored text may hold NUL (PostgreSQL refuses it outright), and a key or filter with one
can never match anything; catching it here, once, keeps it from reaching a query as a
server error. Bodies are checked field by field by their models.
"""

from __future__ import annotations

from starlette.requests import Request
from starlette.types import ASGIApp, Receive, Scope, Send

from service.errors import FieldError, InvalidInputError
from service.http.problems import problem_response


class NulGuardMiddleware:
    """Pure ASGI middleware answering 422 to a path or query holding a NUL character."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        part = _part_with_nul(scope) if scope["type"] == "http" else None
        if part is None:
            await self.app(scope, receive, send)
            return
        message = f"the request's {part} holds a NUL character"
        error = InvalidInputError(message, errors=[FieldError(part, "", message)])
        response = await problem_response(Request(scope), error)
        await response(scope, receive, send)


def _part_with_nul(scope: Scope) -> str | None:
    if "\x00" in scope["path"]:
        return "path"
    query = scope.get("query_string", b"").lower()
    return "query" if b"%00" in query or b"\x00" in query else None
