"""A run's results and the BI ranking, as rows; CSV columns are the rows' field names.

Undefined numbers (NaN, infinities) are ``null`` in JSON and empty in CSV. Folds carry
interval bounds by level: ``lower``/``upper`` objects in JSON, ``lower_<level>`` and
``upper_<level>`` columns in CSV.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any

from pydantic import BaseModel, ConfigDict, Field

from service.http.schemas.common import Page

RATIO_HELP = ("the candidate's ranking score divided by the benchmark's (e.g. relative MASE): "
              "lower is better, below 1 beats the benchmark; the usual skill score is "
              "1 - this ratio")


class Row(BaseModel):
    """A table row; non-finite floats become null."""

    model_config = ConfigDict(ser_json_inf_nan="null")


class ScoreRow(Row):
    """One score of one candidate on one series (``horizon`` null: pooled over horizons)."""

    run_id: int
    series_key: str
    series_version: int
    candidate_id: str
    candidate: str
    horizon: int | None
    metric: str
    level: int | None
    value: float | None
    count: int
    note: str | None


class FoldRow(Row):
    """One horizon of one fold: the training window, the actual and the forecast."""

    run_id: int
    series_key: str
    series_version: int
    candidate_id: str
    candidate: str
    fold: int
    origin: str
    train_start: str
    train_size: int
    reestimated: bool
    status: str
    reason: str | None
    horizon: int
    period: str
    actual: float | None
    point: float | None
    lower: dict[str, float | None]
    upper: dict[str, float | None]


class RunRankRow(Row):
    """A candidate's place in the engine's ranking of one series in this run."""

    run_id: int
    series_key: str
    series_version: int
    rank: int | None
    candidate_id: str
    candidate: str
    score: float | None
    ratio_to_benchmark: float | None = Field(description=RATIO_HELP)
    is_benchmark: bool
    folds_ok: int
    folds_failed: int
    folds_not_converged: int
    in_confidence_set: bool | None
    beats_benchmark: bool | None
    calibration_zone: str | None
    score_own_folds: float | None
    common_folds: int | None
    score_count: int | None
    score_possible: int | None


class EvidenceItem(Row):
    """Sections of one series' assessment evidence."""

    series_key: str
    series_version: int
    sections: dict[str, Any]


class EvidenceRow(Row):
    """One value of the evidence, flattened: ``item`` is its dotted path in the section."""

    run_id: int
    series_key: str
    series_version: int
    section: str
    item: str
    value: str | float | bool | None


class RankingRow(Row):
    """A candidate's rank on a series' latest successful run, by the chosen score."""

    series_key: str
    series_version: int
    run_id: int
    run_finished_at: datetime
    metric: str
    horizon: int | None
    level: int | None
    rank: int | None
    candidate_id: str
    candidate: str
    is_benchmark: bool
    value: float | None
    count: int
    note: str | None


class ScorePage(Page):
    items: list[ScoreRow]


class FoldPage(Page):
    items: list[FoldRow]


class RunRankPage(Page):
    items: list[RunRankRow]


class EvidencePage(Page):
    run_id: int
    items: list[EvidenceItem]


class RankingPage(Page):
    items: list[RankingRow]


def columns(model: type[BaseModel]) -> tuple[str, ...]:
    """The CSV columns of a row model."""
    return tuple(model.model_fields)
