"""Query parameters several routes share."""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends, Path, Query

from service.errors import FieldError, InvalidInputError
from service.http.schemas.common import TAG_NAME, TAG_VALUE
from service.limits import MAX_ID, MAX_TAGS


def tag_filter(tag: Annotated[list[str] | None, Query(
        description="name:value; repeat to require several tags")] = None) -> dict[str, str]:
    """The ``tag`` query values as a name → value mapping; at most :data:`MAX_TAGS`."""
    if len(tag or []) > MAX_TAGS:
        raise InvalidInputError(f"too many tag filters: {len(tag or [])} given, at most "
                                f"{MAX_TAGS} are accepted",
                                errors=[FieldError("query", "/tag", "too many filters")])
    tags: dict[str, str] = {}
    for index, text in enumerate(tag or []):
        name, sep, value = text.partition(":")
        if not sep or not TAG_NAME.fullmatch(name) or not TAG_VALUE.fullmatch(value):
            raise InvalidInputError(
                f"tag {text!r} is not name:value (a name of letters, digits, '_', '.', '-'; "
                "a value of 1 to 200 characters)",
                errors=[FieldError("query", f"/tag/{index}", "expected name:value")])
        tags[name] = value
    return tags


TagFilter = Annotated[dict[str, str], Depends(tag_filter)]


def horizon_or_pooled(text: str) -> int | None:
    """A ``horizon`` query value: a horizon, or ``None`` for ``pooled``."""
    return None if text == "pooled" else int(text)


HORIZON = r"^(pooled|[1-9][0-9]{0,3})$"
HorizonParam = Annotated[str | None, Query(
    pattern=HORIZON, description="a horizon (1, 2, ...) or pooled; absent: all")]
PooledByDefault = Annotated[str, Query(pattern=HORIZON,
                                       description="a horizon (1, 2, ...) or pooled")]


Id = Annotated[int, Path(ge=1, le=MAX_ID)]
"""A run id or version number in a path."""


AsOfParam = Annotated[str | None, Query(description=(
    "ISO 8601 date or time: the answer as it stood then (records are append-only). A date "
    "means the end of that day; a time without an offset is UTC"))]
