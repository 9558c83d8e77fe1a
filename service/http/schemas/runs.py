"""Runs: the submission and the run as read back."""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from backtest.models import FAMILIES
from service.http.schemas.common import SeriesKey, Strict, Tags

if TYPE_CHECKING:  # the checker cannot read a Literal made from a runtime tuple
    Family = str
else:  # from a runtime tuple: values and docs never drift
    Family = Literal[tuple(sorted(FAMILIES))]
RunStatus = Literal["queued", "running", "succeeded", "failed", "cancelled"]
PLAN_EXAMPLE = {"horizon": 6, "max_origins": 12, "levels": [80, 95], "rank_by": "mase"}


class SeriesSelection(Strict):
    """Which series to backtest, each at its latest version: by key, or every series
    carrying all the given tags."""

    keys: list[SeriesKey] | None = Field(None, min_length=1, examples=[["sales/north"]])
    tags: Tags | None = Field(None, min_length=1, examples=[{"region": "north"}])

    @model_validator(mode="after")
    def _one_way(self) -> SeriesSelection:
        if (self.keys is None) == (self.tags is None):
            raise ValueError("give either keys or tags")
        return self


class CandidateIn(BaseModel):
    """A candidate model: ``family`` and that family's fields (see the candidate reference)."""

    model_config = ConfigDict(extra="allow", json_schema_extra={
        "examples": [{"family": "ets", "trend": "damped", "season": "additive"}]})

    family: Family


class RunIn(Strict):
    """A backtest to queue."""

    series: SeriesSelection
    candidates: list[CandidateIn] = Field(min_length=1)
    plan: dict[str, Any] = Field(examples=[PLAN_EXAMPLE],
                                 description="the backtest plan; only horizon is required")


class RunSeriesOut(BaseModel):
    """A series version the run uses."""

    key: str
    version: int
    url: str


class ProgressOut(BaseModel):
    """Folds computed so far out of the run's total (known once a worker starts it)."""

    folds_done: int
    folds_total: int | None
    fraction: float | None


class TimingsOut(BaseModel):
    """When the run was queued, started and finished, and how long the rest should take."""

    queued_at: datetime
    started_at: datetime | None
    finished_at: datetime | None
    waited_seconds: float | None = Field(description="from queued to started")
    ran_seconds: float | None = Field(description="from started to finished, or to now")
    estimated_seconds_left: float | None = Field(
        description="running runs: time so far per fold done times the folds left")


class RunLinks(BaseModel):
    """Where the run's results are."""

    scores: str
    folds: str
    ranking: str
    diagnostics: str
    evidence: str
    report: str


class RunCandidateOut(BaseModel):
    """A candidate of a run: its id and its label at the run's season lengths."""

    id: str
    label: str


class RunOut(BaseModel):
    """A run's request and state."""

    id: int
    url: str
    status: RunStatus
    requested_by: str
    idempotency_key: str | None
    plan_id: str
    seed: int
    attempts: int
    failure_reason: str | None
    cancel_requested_by: str | None = Field(
        description="who asked to cancel a running run that has not stopped yet")
    progress: ProgressOut
    timings: TimingsOut
    series: list[RunSeriesOut]
    candidate_ids: list[str]
    candidates: list[RunCandidateOut] = Field(description="the candidates with their labels, "
                                              "in request order (numbered from 1 there)")
    links: RunLinks


class RunPage(BaseModel):
    """One page of the run listing, newest first; ``next`` links the following page."""

    items: list[RunOut]
    next: str | None
