"""What auditors read: score history, provenance, the audit log and its verification."""

from __future__ import annotations

from datetime import datetime

from pydantic import BaseModel, ConfigDict, Field

from service.http.schemas.common import Page


class ScorePointOut(BaseModel):
    """One successful run's value of the score."""

    model_config = ConfigDict(ser_json_inf_nan="null")

    run_id: int
    run_url: str
    finished_at: datetime
    series_version: int
    value: float | None
    count: int


class ScoreHistoryOut(BaseModel):
    """A candidate's score on a series across runs, oldest first."""

    series_key: str
    candidate_id: str
    metric: str
    horizon: int | None
    level: int | None
    points: list[ScorePointOut]


class RunSummaryOut(BaseModel):
    """A run, briefly."""

    id: int
    url: str
    status: str
    requested_by: str
    queued_at: datetime
    finished_at: datetime | None


class VersionRunsOut(BaseModel):
    """The runs that used one series version, oldest first."""

    series_key: str
    version: int
    runs: list[RunSummaryOut]


class AuditEventOut(BaseModel):
    """One entry of the hash-chained audit log."""

    seq: int
    occurred_at: datetime
    actor: str
    action: str
    subject: str
    subject_label: str = Field(description="the subject in words: series keys, version and "
                               "run numbers, candidate specs (the subject keeps the ids)")
    digest: str = Field(description="SHA-256 of the content the event vouches for")
    prev_hash: str
    hash: str


class AuditEventPage(Page):
    items: list[AuditEventOut]


class VerificationOut(BaseModel):
    """The outcome of checking the whole chain and the content it vouches for."""

    ok: bool
    events_checked: int
    head_hash: str = Field(description="keep it elsewhere to detect truncation later")
    broken_at: int | None
    problem: str | None
