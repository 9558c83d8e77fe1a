"""Errors the HTTP layer raises itself; each carries a stable ``code``.

:mod:`service.http.problems` maps them, and the backtest and storage errors, to problem details.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class FieldError:
    """One invalid input: where it is (``body``, ``query``, ``path``, ``header``), a JSON
    pointer inside that part, and what is wrong."""

    location: str
    pointer: str
    message: str


class ServiceError(Exception):
    """Base class for every error the HTTP layer raises."""

    code = "service_error"

    def __init__(self, detail: str, *, errors: Sequence[FieldError] = ()) -> None:
        super().__init__(detail)
        self.detail = detail
        self.errors = tuple(errors)


class NotAuthenticatedError(ServiceError):
    """The request carries no API key, or one that is malformed, unknown or revoked."""

    code = "not_authenticated"


class PermissionDeniedError(ServiceError):
    """The API key's role does not allow this operation."""

    code = "permission_denied"


class InvalidInputError(ServiceError):
    """The request is well-formed but its content is invalid; ``errors`` says where."""

    code = "invalid_input"


class LimitExceededError(ServiceError):
    """The request asks for more than a configured limit allows; ``estimate`` and ``limit``
    (if given) are shown in the problem document as they are."""

    code = "limit_exceeded"

    def __init__(self, detail: str, *, errors: Sequence[FieldError] = (),
                 estimate: dict[str, Any] | None = None,
                 limit: dict[str, Any] | None = None) -> None:
        super().__init__(detail, errors=errors)
        self.estimate, self.limit = estimate, limit


class QuotaExceededError(ServiceError):
    """The API key has used up a quota for now; ``retry_after`` seconds from now it may
    succeed. ``usage`` and ``limit`` are shown in the problem document as they are."""

    code = "quota_exceeded"

    def __init__(self, detail: str, *, retry_after: int, usage: dict[str, Any],
                 limit: dict[str, Any]) -> None:
        super().__init__(detail)
        self.retry_after, self.usage, self.limit = retry_after, usage, limit


class NotAcceptableError(ServiceError):
    """The client accepts none of the media types the resource is available in."""

    code = "not_acceptable"


class UnsupportedMediaTypeError(ServiceError):
    """The request body is in a media type this operation does not take."""

    code = "unsupported_media_type"


class NotReadyError(ServiceError):
    """The server cannot serve requests yet: the store is unreachable or not migrated."""

    code = "not_ready"


class InvalidSelectionError(InvalidInputError):
    """A run's series selection names no stored series, or a missing one."""

    code = "invalid_selection"


class BodyTooLargeError(ServiceError):
    """The request body is larger than ``FOLDLINE_MAX_BODY_BYTES``."""

    code = "body_too_large"


class RunNotFinishedError(ServiceError):
    """The run is queued or running: what is asked for exists only once it is final."""

    code = "run_not_finished"
