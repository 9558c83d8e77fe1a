"""Shapes shared by several resources: strict input models, pages, tags."""

from __future__ import annotations

import re
from typing import Annotated

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, StringConstraints

from service.limits import MAX_TAGS
from service.usecases.series_keys import normalised_key

TAG_NAME = re.compile(r"[A-Za-z0-9_.-]{1,64}")
TAG_VALUE = re.compile(r"[^\x00-\x1f]{1,200}")
TagName = Annotated[str, StringConstraints(pattern=f"^{TAG_NAME.pattern}$")]
TagValue = Annotated[str, StringConstraints(pattern=f"^{TAG_VALUE.pattern}$")]
Tags = Annotated[dict[TagName, TagValue], Field(max_length=MAX_TAGS)]
SeriesKey = Annotated[str, AfterValidator(normalised_key)]
"""A series key in a request body, normalised and checked (:mod:`service.usecases.series_keys`)."""


class Strict(BaseModel):
    """A request body: unknown fields are refused, not ignored."""

    model_config = ConfigDict(extra="forbid")


class Page(BaseModel):
    """Paging links shared by every list."""

    next: str | None = Field(description="URL of the next page; null on the last page")

