"""Issued forecasts (the ledger) and their outcomes; CSV columns are the rows' field names."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from pydantic import BaseModel, Field

from service.http.schemas.champions import CANDIDATE_ID
from service.http.schemas.common import Page, SeriesKey, Strict
from service.http.schemas.results import Row
from service.limits import MAX_ID, MAX_LEVEL, MIN_LEVEL


class ForecastIn(Strict):
    """What to issue: a series version, a candidate (default: the series' champion), the
    horizon, interval levels and seed. Identical inputs return the forecast issued before."""

    series_key: SeriesKey = Field(examples=["sales/north"])
    version: int | None = Field(None, ge=1, le=MAX_ID, description="default: the latest")
    candidate_id: str | None = Field(None, pattern=CANDIDATE_ID,
                                     description="default: the series' current champion")
    horizon: int = Field(ge=1, le=MAX_ID, examples=[6],
                         description="steps ahead; at most FOLDLINE_MAX_HORIZON")
    levels: list[int] = Field([80, 95], min_length=1, description="central interval levels: "
                              f"whole percentages from {MIN_LEVEL} to {MAX_LEVEL}, none "
                              "repeated, at most FOLDLINE_MAX_LEVELS of them")
    seed: int = Field(0, ge=0, le=MAX_ID, description="seeds any simulated intervals")



class StepOut(Row):
    """One step ahead of an issued forecast."""

    horizon: int
    period: str
    point: float | None
    lower: dict[str, float | None]
    upper: dict[str, float | None]


class ForecastLinks(BaseModel):
    outcomes: str
    series: str
    monitoring: str


class ForecastOut(Row):
    """An issued forecast as recorded in the ledger; it never changes."""

    id: int
    url: str
    series_key: str
    series_version: int
    fingerprint: str = Field(description="of the series version it was fitted on")
    candidate_id: str
    candidate: str
    candidate_spec: dict[str, Any]
    origin: str = Field(description="the last period of the data it was fitted on")
    horizon: int
    levels: list[int]
    seed: int
    steps: list[StepOut]
    params: dict[str, float | None]
    scale: float | None
    scale_sq: float | None
    software: dict[str, str]
    warnings: list[str]
    issued_by: str
    issued_at: datetime
    links: ForecastLinks


class ForecastPage(Page):
    """Issued forecasts, oldest first."""

    items: list[ForecastOut]


class ForecastRow(Row):
    """One step and level of an issued forecast (the flat ledger)."""

    forecast_id: int
    series_key: str
    series_version: int
    candidate_id: str
    candidate: str
    issued_at: datetime
    issued_by: str
    origin: str
    horizon: int
    period: str
    point: float | None
    level: int
    lower: float | None
    upper: float | None


class OutcomeOut(Row):
    """What came true for one step: the error is actual minus point."""

    horizon: int
    period: str
    actual: float | None
    point: float | None
    error: float | None
    scaled_error: float | None
    smape_term: float | None
    hits: dict[str, bool]
    interval_scores: dict[str, float | None]


class OutcomeSetOut(BaseModel):
    """A forecast's outcomes scored against one version of its series."""

    series_version: int
    scored_at: datetime
    current: bool = Field(description="scored against the latest version scored so far")
    outcomes: list[OutcomeOut]


class OutcomesOut(BaseModel):
    """The outcomes of an issued forecast: the current set, or every set with ``all``."""

    forecast_id: int
    forecast_url: str
    series_key: str
    candidate_id: str
    sets: list[OutcomeSetOut]


class OutcomeRow(Row):
    """One step and level of a forecast's outcome against one series version."""

    forecast_id: int
    series_key: str
    candidate_id: str
    series_version: int
    scored_at: datetime
    horizon: int
    period: str
    actual: float | None
    point: float | None
    error: float | None
    scaled_error: float | None
    smape_term: float | None
    level: int
    hit: bool
    interval_score: float | None
