"""A series' dossier: one answer to "which model did we trust, why, and how did it do?"."""

from __future__ import annotations

from datetime import datetime

from pydantic import BaseModel, Field

from service.http.schemas.results import Row


class JustificationOut(BaseModel):
    """What the run behind a champion choice said of the chosen candidate."""

    run_id: int
    run_url: str
    series_version: int
    rank: int | None
    score: float | None
    in_confidence_set: bool | None
    mase_by_horizon: dict[int, float] = Field(description="the backtest's MASE at each horizon")


class ChampionEntryOut(BaseModel):
    """A champion choice with the candidate's label and its run's evidence."""

    choice_id: int
    candidate_id: str
    candidate: str
    reason: str
    chosen_by: str
    chosen_at: datetime
    justification: JustificationOut | None


class VersionEntryOut(BaseModel):
    """A version of the series' data, identified by its fingerprint."""

    version: int
    fingerprint: str
    change: str
    n_obs: int
    first_period: str
    last_period: str
    created_at: datetime
    created_by: str


class StepRow(Row):
    """One step of an issued forecast beside its actual (if known by ``as_of``) and the
    backtest's promise at that horizon."""

    series_key: str
    forecast_id: int
    issued_at: datetime
    issued_by: str
    candidate_id: str
    candidate: str
    series_version: int
    fingerprint: str
    origin: str
    horizon: int
    period: str
    point: float
    actual: float | None
    error: float | None
    scaled_error: float | None
    promised_mase: float | None = Field(description="the backtest's MASE at this horizon from "
                                        "the run behind the champion choice in force at issue")
    hits: str | None = Field(description="levels whose interval held the actual, e.g. 80:1 95:1")


class ForecastEntryOut(BaseModel):
    """An issued forecast with its realised accuracy against what the backtest promised."""

    forecast_id: int
    url: str
    issued_at: datetime
    issued_by: str
    candidate_id: str
    candidate: str
    series_version: int
    fingerprint: str
    origin: str
    periods: list[str]
    outcomes_known: int
    scored_on_version: int | None
    realised_mase: float | None = Field(description="mean absolute scaled error of the steps "
                                        "whose actuals were known by as_of")
    promised_mase: float | None = Field(description="the backtest's MASE over the same "
                                        "horizons, from the champion's run")
    coverage: dict[int, float] = Field(description="share of known steps inside each level's "
                                       "interval, by level")


class EventOut(BaseModel):
    """An audit event that touched the series, its versions, results or ledger."""

    seq: int
    occurred_at: datetime
    actor: str
    action: str
    subject: str
    subject_label: str = Field(description="the subject in words (the subject keeps the ids)")
    digest: str


class DossierOut(BaseModel):
    """The series as it stood at ``as_of``."""

    series_key: str
    unit: str | None
    frequency: str
    season_length: int
    as_of: datetime
    champion: ChampionEntryOut | None = Field(description="the champion in force at as_of")
    champion_history: list[ChampionEntryOut]
    versions: list[VersionEntryOut]
    forecasts: list[ForecastEntryOut]
    events: list[EventOut]
