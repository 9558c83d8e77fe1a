"""Unknown query parameters are refused: a misspelt filter or format must never be silently
ignored (a BI tool would then load an unfiltered table as if it were filtered)."""

from __future__ import annotations

from fastapi import Request
from fastapi.dependencies.models import Dependant
from fastapi.routing import APIRoute

from service.errors import FieldError, InvalidInputError

_ALLOWED: dict[int, frozenset[str]] = {}


def reject_unknown_query(request: Request) -> None:
    """Raise a 422 problem naming every query parameter the matched route does not take."""
    route = request.scope.get("route")
    if not isinstance(route, APIRoute):
        return
    allowed = _ALLOWED.get(id(route))
    if allowed is None:
        allowed = _ALLOWED[id(route)] = frozenset(_query_names(route.dependant))
    unknown = sorted(set(request.query_params) - allowed)
    if unknown:
        takes = ", ".join(sorted(allowed)) or "no query parameters"
        raise InvalidInputError(
            f"unknown query parameter{'s' if len(unknown) > 1 else ''} "
            f"{', '.join(unknown)}; this endpoint takes {takes}",
            errors=[FieldError("query", f"/{name}", "unknown parameter") for name in unknown])


def _query_names(dependant: Dependant) -> set[str]:
    names = {field.alias for field in dependant.query_params}
    for child in dependant.dependencies:
        names |= _query_names(child)
    return names
