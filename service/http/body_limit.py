"""The request-body size limit (``FOLDLINE_MAX_BODY_BYTES``), answered as a problem (413).

A declared ``Content-Length`` over the limit is refused before the body is read; a body
sent without one is counted as it arrives and refused once it passes the limit, before any
handler has used it. Either way nothing is stored.
"""

from __future__ import annotations

from starlette.requests import Request
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from service.errors import BodyTooLargeError
from service.http.problems import problem_response


class BodyLimitMiddleware:
    """Pure ASGI middleware enforcing the body limit."""

    def __init__(self, app: ASGIApp, max_bytes: int) -> None:
        self.app = app
        self.max_bytes = max_bytes

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        declared = Request(scope).headers.get("content-length", "")
        if declared.isdigit() and int(declared) > self.max_bytes:
            response = await problem_response(Request(scope), self._error())
            await response(scope, receive, send)
            return
        received = 0

        async def counted() -> Message:
            nonlocal received
            message = await receive()
            received += len(message.get("body", b""))
            if received > self.max_bytes:
                raise self._error()
            return message

        await self.app(scope, counted, send)

    def _error(self) -> BodyTooLargeError:
        return BodyTooLargeError(f"the request body is larger than {self.max_bytes} bytes, the "
                                 "limit set by FOLDLINE_MAX_BODY_BYTES; nothing was stored")
