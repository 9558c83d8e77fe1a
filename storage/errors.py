"""Errors raised by the storage layer; each carries a stable ``code`` for callers to map.

Database driver and SQLAlchemy errors never leave ``storage``: public functions are wrapped
in :func:`translates_errors`, which re-raises them as one of these ``from`` the original.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import ParamSpec, TypeVar

from sqlalchemy import exc as sa_exc

IMMUTABLE_MARKER = "foldline_immutable"
"""Text every database trigger puts in the message when it refuses a change."""

_P = ParamSpec("_P")
_R = TypeVar("_R")


class StorageError(Exception):
    """Base class for every error the storage layer raises."""

    code = "storage_error"


class NotFoundError(StorageError):
    """A series, version, run or other record does not exist."""

    code = "not_found"


class ConflictError(StorageError):
    """The write contradicts what is stored (duplicate key, wrong run state, mismatched data)."""

    code = "conflict"


class ImmutableRecordError(StorageError):
    """The write would change or delete a record that is append-only or finished."""

    code = "immutable_record"


class LeaseLostError(ConflictError):
    """A worker no longer holds the run's lease (it expired and another worker claimed the
    run, or the run was cancelled); its write was refused."""

    code = "lease_lost"


class StoreUnavailableError(StorageError):
    """The database cannot be reached, or is locked or busy; retrying later may succeed."""

    code = "store_unavailable"


class ConfigurationError(StorageError):
    """The database URL or migration setup is invalid."""

    code = "invalid_configuration"


def translate(exc: sa_exc.SQLAlchemyError) -> StorageError:
    """The storage error that stands for a SQLAlchemy error."""
    message = str(getattr(exc, "orig", None) or exc).strip().splitlines()[0]
    if IMMUTABLE_MARKER in message:
        return ImmutableRecordError(message)
    if isinstance(exc, sa_exc.IntegrityError):
        return ConflictError(message)
    if isinstance(exc, sa_exc.OperationalError | sa_exc.InterfaceError | sa_exc.TimeoutError):
        return StoreUnavailableError(message)
    if isinstance(exc, sa_exc.ArgumentError | sa_exc.NoSuchModuleError):
        return ConfigurationError(message)
    return StorageError(message)


def translates_errors(func: Callable[_P, _R]) -> Callable[_P, _R]:
    """Decorate a storage function so SQLAlchemy errors leave it as :class:`StorageError`."""

    @functools.wraps(func)
    def wrapper(*args: _P.args, **kwargs: _P.kwargs) -> _R:
        try:
            return func(*args, **kwargs)
        except sa_exc.SQLAlchemyError as exc:
            raise translate(exc) from exc

    return wrapper
