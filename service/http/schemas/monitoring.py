"""Monitoring: a series' realised accuracy beside its backtest's expectation, and flags."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, Field

from service.http.schemas.common import Page
from service.http.schemas.results import Row

State = Literal["raised", "clear", "not_enough_data"]
STATE_HELP = ("raised: the rule's test rejects; clear: tested, no rejection; "
              "not_enough_data: too few outcomes (or no backtest) to test, which says nothing "
              "either way")
OUTCOMES_HELP = "one-step outcomes the rule had"
NEEDED_HELP = "the fewest one-step outcomes the rule tests on"


class FlagOut(Row):
    """One monitoring rule's verdict on the realised outcomes."""

    rule: str = Field(description="coverage, accuracy or level_shift")
    state: State = Field(description=STATE_HELP)
    level: int | None
    statistic: float | None
    p_value: float | None
    threshold: float | None
    first_period: str | None = Field(description="where the evidence starts")
    detail: str
    outcomes: int = Field(description=OUTCOMES_HELP)
    needed: int = Field(description=NEEDED_HELP)


class RealisedOut(Row):
    """Realised accuracy of the outcomes whose target is one period."""

    period: str
    count: int
    horizons: list[int] = Field(description="the steps ahead of the outcomes")
    mase: float | None
    expected_mase: float | None = Field(description="the backtest MASE at those horizons")
    smape: float | None
    coverage: dict[str, float | None]
    interval_score: dict[str, float | None]


class ExpectationOut(Row):
    """What the backtest led one to expect of the candidate, per horizon and level."""

    candidate_id: str
    run_id: int | None
    mase_by_horizon: dict[str, float | None]
    coverage_by_level: dict[str, float | None]


class MonitoringOut(BaseModel):
    """A series' candidate (its champion by default) under monitoring."""

    series_key: str
    candidate_id: str
    candidate: str | None = Field(description="the candidate's label at the series' season "
                                  "length (null for an unknown candidate id)")
    is_champion: bool
    forecasts: int = Field(description="issued forecasts of this candidate on the series")
    realised: list[RealisedOut]
    expectation: ExpectationOut | None = Field(
        description="from the latest succeeded run that backtested the candidate; null if none")
    flags: list[FlagOut]
    raised: list[str] = Field(description="the rules whose flag is raised")
    not_enough_data: list[str] = Field(description="the rules that could not be tested")


class FlagRow(Row):
    """One rule's verdict for one series' champion (the monitoring table)."""

    series_key: str
    candidate_id: str
    candidate: str | None
    rule: str
    state: State = Field(description=STATE_HELP)
    level: int | None
    statistic: float | None
    p_value: float | None
    threshold: float | None
    first_period: str | None
    detail: str
    outcomes: int = Field(description=OUTCOMES_HELP)
    needed: int = Field(description=NEEDED_HELP)


class FlagPage(Page):
    """Every series with a champion, each with its flags, by series key."""

    items: list[FlagRow]


class RealisedRow(Row):
    """One period and level of a series' realised accuracy (the monitoring CSV)."""

    series_key: str
    candidate_id: str
    candidate: str | None
    period: str
    count: int
    mase: float | None
    expected_mase: float | None
    smape: float | None
    level: int | None
    coverage: float | None
    interval_score: float | None
