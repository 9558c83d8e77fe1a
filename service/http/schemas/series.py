"""Series: what is posted (JSON or CSV) and what is read back."""

from __future__ import annotations

from datetime import datetime
from typing import Literal

from pydantic import BaseModel, Field

from service.http.schemas.common import Page, SeriesKey, Strict, Tags
from service.limits import (
    MAX_PERIOD_LENGTH,
    MAX_SEASON_LENGTH,
    MAX_UNIT_LENGTH,
    UNIT_PATTERN,
)

VersionChange = Literal["initial", "append", "revision"]


class ObservationIn(Strict):
    """One observation: a period label (e.g. ``2024-03``) and its value."""

    period: str = Field(min_length=1, max_length=MAX_PERIOD_LENGTH, examples=["2024-03"])
    value: float = Field(allow_inf_nan=False)


class SeriesIn(Strict):
    """A whole series. Posting data identical to a stored version creates no new version."""

    key: SeriesKey = Field(examples=["sales/north"])
    frequency: str = Field(pattern=r"^P[1-9][0-9]{0,3}[DWMY]$", examples=["P1M"],
                           description="ISO 8601 duration: P1D, P1W, P1M, P3M, P1Y, ...")
    season_length: int | None = Field(None, ge=1, le=MAX_SEASON_LENGTH,
                                      description="default: from the frequency (P1M: 12)")
    unit: str | None = Field(None, max_length=MAX_UNIT_LENGTH, pattern=UNIT_PATTERN,
                             examples=["EUR"], description="shown on charts' value axes")
    tags: Tags | None = Field(None, description="fixed by the first post; null keeps them")
    fill: Literal["reject", "linear"] = Field(
        "reject", description="missing periods: refuse them, or interpolate linearly")
    observations: list[ObservationIn] = Field(min_length=1)


class AppendIn(Strict):
    """New actuals for a stored series; periods already stored must repeat their value."""

    observations: list[ObservationIn] = Field(min_length=1)


class VersionOut(BaseModel):
    """One immutable version of a series."""

    number: int
    fingerprint: str = Field(description="SHA-256 of the canonical series")
    change: VersionChange
    n_obs: int
    first_period: str
    last_period: str
    created_at: datetime
    created_by: str


class SeriesOut(BaseModel):
    """A series and its latest version."""

    key: str
    url: str
    frequency: str
    season_length: int
    unit: str | None
    tags: dict[str, str]
    created_at: datetime
    created_by: str
    latest_version: VersionOut


class SeriesDetailOut(SeriesOut):
    """A series with every version, oldest first."""

    versions: list[VersionOut]


class ObservationOut(BaseModel):
    """A stored observation; ``filled`` marks a value made by the fill policy."""

    period: str
    value: float
    filled: bool


class VersionDataOut(VersionOut):
    """A version with its observations."""

    series_key: str
    observations: list[ObservationOut]


class SeriesWriteOut(BaseModel):
    """The outcome of posting one series: the version its data is stored as."""

    series_key: str
    url: str
    created: bool = Field(description="false when identical data was stored already")
    version: VersionOut


class UploadOut(BaseModel):
    """The outcome of a CSV upload, one entry per series in file order."""

    versions_created: int
    series: list[SeriesWriteOut]


class SeriesPage(Page):
    """A page of series, ordered by key."""

    items: list[SeriesOut]
