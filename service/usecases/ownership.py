"""Ownership of series: a key's scope, the series-key prefix its team owns.

A scope is a prefix of whole key segments, stored with a closing ``/`` (``sales/north/``
owns ``sales/north/berlin`` but neither ``sales/northwest/x`` nor ``sales/north`` itself).
The decisions:

- only submitter keys carry a scope; a submitter key without one is global (a central
  pipeline's key) and writes every series;
- reader, auditor and admin keys are always global: reading is not partitioned (rankings,
  the ledger, BI views and the audit's verification span the whole store), so a scope on
  such a key would promise a restriction nothing enforces and is refused when it is made;
- a scoped key writes only inside its scope: posting, uploading and appending series,
  submitting runs (every selected series), choosing champions and issuing forecasts;
- a run is cancelled by an admin, by the key that submitted it, or by a key whose scope
  holds every series of the run (its team).

A refusal is ``403`` naming the scope and the first key outside it.
"""

from __future__ import annotations

import unicodedata
from collections.abc import Iterable
from typing import Protocol

from service.errors import FieldError, InvalidInputError, PermissionDeniedError
from service.limits import MAX_KEY_LENGTH
from service.usecases.series_keys import SeriesKeyError, normalised_key

SCOPED_ROLES = ("submitter",)


class KeyHolder(Protocol):
    """Who makes a request: an API key's name, role and scope (the HTTP layer's caller).

    Read-only, so a frozen dataclass such as the HTTP layer's caller satisfies it."""

    @property
    def name(self) -> str: ...

    @property
    def role(self) -> str: ...

    @property
    def scope(self) -> str | None: ...


def parsed_scope(scope: str | None, role: str) -> str | None:
    """The stored form of a scope asked for a new key of ``role``; raise
    :class:`InvalidInputError` if it is not a series-key prefix or the role takes none."""
    if scope is None:
        return None
    if role not in SCOPED_ROLES:
        raise _invalid(f"a {role} key is global and takes no scope; scopes limit what "
                       f"{' and '.join(SCOPED_ROLES)} keys may write")
    try:
        prefix = normalised_key(scope.removesuffix("/"))
    except SeriesKeyError as exc:
        raise _invalid(f"scope {scope!r} is not a series-key prefix: {exc}") from None
    if len(prefix) >= MAX_KEY_LENGTH:
        raise _invalid(f"a scope has at most {MAX_KEY_LENGTH} characters with its closing '/'")
    return prefix + "/"


def owns(scope: str | None, series_key: str) -> bool:
    """Whether a key of ``scope`` may write the series ``series_key``."""
    return scope is None or unicodedata.normalize("NFC", series_key).startswith(scope)


def check_writes(caller: KeyHolder, series_keys: Iterable[str]) -> None:
    """Refuse the request unless ``caller``'s scope holds every one of ``series_keys``."""
    for key in series_keys:
        if not owns(caller.scope, key):
            raise PermissionDeniedError(
                f"key {caller.name!r} writes only series under {caller.scope!r}; series "
                f"{key!r} is outside its scope")


def check_cancel(caller: KeyHolder, requested_by: str, series_keys: Iterable[str]) -> None:
    """Refuse a cancel unless ``caller`` is an admin, submitted the run, or owns all of
    its series."""
    if caller.role == "admin" or caller.name == requested_by:
        return
    outside = [key for key in series_keys if not owns(caller.scope, key)]
    if outside:
        raise PermissionDeniedError(
            f"key {caller.name!r} may cancel only its own runs and runs on series under "
            f"{caller.scope!r}; this run of {requested_by!r} includes series {outside[0]!r}")


def _invalid(message: str) -> InvalidInputError:
    return InvalidInputError(message, errors=[FieldError("body", "/scope", message)])
