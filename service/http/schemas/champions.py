"""Champions: choosing one, reading the current choice and its history, and suggestions."""

from __future__ import annotations

from datetime import datetime

from pydantic import Field

from service.http.schemas.common import Page, Strict
from service.http.schemas.results import Row
from service.limits import MAX_ID

CANDIDATE_ID = r"^c[0-9a-f]{16}$"


class ChampionIn(Strict):
    """A candidate chosen as a series' champion, the run that justified it, and why."""

    candidate_id: str = Field(pattern=CANDIDATE_ID, examples=["c0123456789abcdef"])
    run_id: int = Field(ge=1, le=MAX_ID,
                        description="a succeeded run that backtested this candidate on the series")
    reason: str = Field(min_length=1, max_length=2000, pattern=r"^[^\x00-\x08\x0b-\x1f]*$",
                        description="free text kept with the choice")


class ChampionRow(Row):
    """One choice of a series' champion; the latest choice is the current champion."""

    series_key: str
    choice_id: int
    candidate_id: str
    candidate: str = Field(description="the candidate's label at the series' season length")
    run_id: int | None
    reason: str
    chosen_by: str
    chosen_at: datetime


class ChampionHistory(Page):
    """Every champion choice of a series, oldest first."""

    series_key: str
    items: list[ChampionRow]


class ChampionPage(Page):
    """The current champion of every series that has one, by series key."""

    items: list[ChampionRow]


class SuggestionRow(Row):
    """The candidate a run suggests as a series' champion; a person confirms it by posting
    it to the series' champion."""

    run_id: int
    series_key: str
    series_version: int
    candidate_id: str
    candidate: str
    rank: int
    score: float | None
    in_confidence_set: bool | None
    basis: str = Field(description="confidence_set: best-ranked candidate in the model "
                                   "confidence set; rank: no set was computed, best-ranked")
    current_champion: str | None = Field(description="the series' champion now, if any")


class SuggestionPage(Page):
    """A run's suggestions, one per series, in the run's series order."""

    items: list[SuggestionRow]
