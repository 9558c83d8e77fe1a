"""Every error answered as an RFC 9457 problem details document (``application/problem+json``).

One table maps exception classes to a status and title; :func:`problem_response` finds the
entry by walking the exception's MRO, so a new leaf without its own entry still gets its
family's. Server-side failures (5xx) get a fixed detail and are logged; the client never
sees a stack trace or a database message. Besides the standard members a problem has
``code`` (stable, machine-readable) and, for invalid input, ``errors``: one entry per field.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from dataclasses import dataclass
from http import HTTPStatus
from typing import Any

from fastapi import Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from pydantic import BaseModel, Field
from sqlalchemy.exc import SQLAlchemyError
from starlette.exceptions import HTTPException

from backtest.errors import (
    BacktestError,
    CandidateError,
    PlanError,
    SeriesError,
    SeriesTooLongError,
    TooManySeriesError,
)
from backtest.ledger import LedgerError
from service.errors import (
    BodyTooLargeError,
    FieldError,
    InvalidInputError,
    InvalidSelectionError,
    LimitExceededError,
    NotAcceptableError,
    NotAuthenticatedError,
    NotReadyError,
    PermissionDeniedError,
    QuotaExceededError,
    RunNotFinishedError,
    ServiceError,
    UnsupportedMediaTypeError,
)
from storage.errors import (
    ConfigurationError,
    ConflictError,
    ImmutableRecordError,
    LeaseLostError,
    NotFoundError,
    StorageError,
    StoreUnavailableError,
    translate,
)

MEDIA_TYPE = "application/problem+json"
TYPE_PREFIX = "urn:foldline:problem:"
RETRY_AFTER_SECONDS = 5
log = logging.getLogger("foldline.api")


@dataclass(frozen=True)
class Kind:
    """How one family of errors is answered; ``hidden`` keeps its message server-side."""

    status: int
    title: str
    hidden: bool = False


PROBLEMS: dict[type[Exception], Kind] = {
    BacktestError: Kind(422, "Invalid backtest input"),
    SeriesError: Kind(422, "Invalid series"),
    SeriesTooLongError: Kind(422, "Limit exceeded"),
    TooManySeriesError: Kind(422, "Limit exceeded"),
    CandidateError: Kind(422, "Invalid candidate"),
    PlanError: Kind(422, "Invalid plan"),
    LedgerError: Kind(422, "Invalid forecast ledger input"),
    StorageError: Kind(500, "Storage failure", hidden=True),
    NotFoundError: Kind(404, "Not found"),
    ConflictError: Kind(409, "Conflict with stored data"),
    LeaseLostError: Kind(409, "Run no longer leased by this worker"),
    ImmutableRecordError: Kind(409, "Stored record cannot change"),
    StoreUnavailableError: Kind(503, "Store unavailable", hidden=True),
    ConfigurationError: Kind(500, "Store misconfigured", hidden=True),
    ServiceError: Kind(400, "Bad request"),
    NotAuthenticatedError: Kind(401, "Authentication required"),
    PermissionDeniedError: Kind(403, "Permission denied"),
    InvalidInputError: Kind(422, "Invalid input"),
    LimitExceededError: Kind(422, "Limit exceeded"),
    QuotaExceededError: Kind(429, "Quota exceeded"),
    NotAcceptableError: Kind(406, "Not acceptable"),
    UnsupportedMediaTypeError: Kind(415, "Unsupported media type"),
    NotReadyError: Kind(503, "Not ready"),
    BodyTooLargeError: Kind(413, "Request body too large"),
    RunNotFinishedError: Kind(409, "Run not finished"),
    InvalidSelectionError: Kind(422, "Invalid series selection"),
    RequestValidationError: Kind(422, "Invalid request"),
    Exception: Kind(500, "Internal error", hidden=True),
}
HIDDEN_DETAIL = {
    500: "The server failed to handle the request; nothing was changed. The failure is logged.",
    503: "The store is unreachable or busy; nothing was changed. Retry later.",
}
HTTP_CODES = {404: "not_found", 405: "method_not_allowed"}


class ProblemField(BaseModel):
    """One invalid input."""

    location: str = Field(description="body, query, path or header")
    pointer: str = Field(description="JSON pointer inside that part, e.g. /candidates/0/family")
    message: str


class Problem(BaseModel):
    """An RFC 9457 problem details document."""

    type: str = Field(description="URI naming the kind of problem: urn:foldline:problem:<code>")
    title: str
    status: int
    detail: str
    instance: str = Field(description="the request path")
    code: str = Field(description="stable machine-readable code")
    errors: list[ProblemField] = Field(default_factory=list,
                                       description="field-level errors of invalid input")
    estimate: dict[str, Any] | None = Field(None, description="limit_exceeded: what the "
                                            "request would cost (e.g. a run's folds, fits by "
                                            "family, rows)")
    limit: dict[str, Any] | None = Field(None, description="limit_exceeded, quota_exceeded: "
                                         "the configured limits it was measured against")
    usage: dict[str, Any] | None = Field(None, description="quota_exceeded: what the API key "
                                         "has used of each quota")
    retry_after: int | None = Field(None, description="quota_exceeded: seconds until a retry "
                                    "may succeed (also the Retry-After header)")


def kind_of(exc: Exception) -> Kind:
    """The table entry of the nearest class in the exception's MRO."""
    return next(PROBLEMS[cls] for cls in type(exc).__mro__ if cls in PROBLEMS)


async def problem_response(request: Request, exc: Exception) -> JSONResponse:
    """The exception handler registered for every family in :data:`PROBLEMS`."""
    problem, headers = _problem(request, exc)
    if problem.status >= 500:
        log.error("%s %s failed: %s: %s", request.method, request.url.path,
                  type(exc).__name__, exc, exc_info=problem.code == "internal_error")
    return JSONResponse(problem.model_dump(exclude_none=True), status_code=problem.status,
                        headers=headers, media_type=MEDIA_TYPE)


def _problem(request: Request, exc: Exception) -> tuple[Problem, dict[str, str]]:
    if isinstance(exc, HTTPException):
        return _http_problem(request, exc)
    if isinstance(exc, SQLAlchemyError):
        # raised outside a storage function (a commit or rollback on a dropped connection)
        exc = translate(exc)
    kind = kind_of(exc)
    detail = HIDDEN_DETAIL[kind.status] if kind.hidden else _detail(exc)
    headers = {}
    if kind.status == 401:
        headers["WWW-Authenticate"] = "Bearer"
    if kind.status == 503:
        headers["Retry-After"] = str(RETRY_AFTER_SECONDS)
    code = getattr(exc, "code", None) or _fallback_code(exc)
    problem = _make(request, kind.status, kind.title, detail, code, _field_errors(exc))
    if isinstance(exc, LimitExceededError):
        problem.estimate, problem.limit = exc.estimate, exc.limit
    if isinstance(exc, QuotaExceededError):
        problem.usage, problem.limit, problem.retry_after = exc.usage, exc.limit, exc.retry_after
        headers["Retry-After"] = str(exc.retry_after)
    return problem, headers


def _http_problem(request: Request, exc: HTTPException) -> tuple[Problem, dict[str, str]]:
    status = exc.status_code
    title = _phrase(status)
    if status == 404:
        detail = f"no resource at {request.url.path}"
    elif status == 405:
        detail = f"{request.method} is not allowed on {request.url.path}"
    else:
        detail = str(exc.detail)
    code = HTTP_CODES.get(status, f"http_{status}")
    return _make(request, status, title, detail, code, []), dict(exc.headers or {})


def _phrase(status: int) -> str:
    try:
        return HTTPStatus(status).phrase
    except ValueError:
        return "Error"


def _make(request: Request, status: int, title: str, detail: str, code: str,
          errors: list[FieldError]) -> Problem:
    return Problem(type=TYPE_PREFIX + code, title=title, status=status, detail=detail,
                   instance=request.url.path, code=code,
                   errors=[ProblemField(location=e.location, pointer=e.pointer,
                                        message=e.message) for e in errors])


def _detail(exc: Exception) -> str:
    if isinstance(exc, ServiceError):
        return exc.detail
    if isinstance(exc, RequestValidationError):
        count = len(exc.errors())
        return f"the request has {count} invalid field{'s' if count != 1 else ''}; see errors"
    return " ".join(str(exc).split())


def _fallback_code(exc: Exception) -> str:
    return "invalid_request" if isinstance(exc, RequestValidationError) else "internal_error"


def _field_errors(exc: Exception) -> list[FieldError]:
    if isinstance(exc, ServiceError):
        return list(exc.errors)
    if isinstance(exc, RequestValidationError):
        return [_field_error(error) for error in exc.errors()]
    if isinstance(exc, BacktestError) and exc.pointer:
        return [FieldError("body", exc.pointer, _detail(exc))]
    return []


def _field_error(error: dict[str, Any]) -> FieldError:
    location, *path = error["loc"] or ("body",)
    if error.get("type") == "json_invalid":
        return FieldError(location, "", f"the body is not valid JSON: "
                          f"{error.get('ctx', {}).get('error', error['msg'])}")
    return FieldError(str(location), pointer(path), error["msg"])


def pointer(path: Sequence[object]) -> str:
    """A JSON pointer (RFC 6901) for a path of keys and indices."""
    escaped = (str(part).replace("~", "~0").replace("/", "~1") for part in path)
    return "".join("/" + part for part in escaped)


def problem_responses(*statuses: int) -> dict[int | str, dict[str, Any]]:
    """OpenAPI entries for the problem answers a route can give."""
    return {status: {"model": Problem, "description": _phrase(status)} for status in statuses}
