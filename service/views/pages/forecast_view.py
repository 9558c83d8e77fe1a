"""What an issued forecast's page shows, read in one transaction: the record, the version it
was fitted on, every outcome set scored against it (one per later version with actuals),
and its forecast beside the actuals the series' latest version holds."""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy.orm import Session

from backtest.series import Series
from service.views.charts.fan import ForecastBands
from service.views.pages.ledger_view import forecast_bands
from storage.ledger import IssuedRecord, OutcomeSet, get_issued, outcome_sets
from storage.series import SeriesInfo, get_series, get_version, load_series


@dataclass(frozen=True)
class ScoredSet:
    """An outcome set with the number of the version it was scored against."""

    outcomes: OutcomeSet
    version: int


@dataclass(frozen=True)
class ForecastView:
    """One issued forecast: the record, its series, the number of the version it was fitted
    on, its outcome sets (oldest version first), the data it was fitted on and its bands
    with the actuals known now."""

    record: IssuedRecord
    series: SeriesInfo
    version: int
    sets: list[ScoredSet]
    history: Series
    bands: ForecastBands


def load_forecast_page(session: Session, forecast_id: int) -> ForecastView:
    """The page of an issued forecast; ``NotFoundError`` if there is none with this id."""
    record = get_issued(session, forecast_id)
    series = get_series(session, record.series_key)
    sets = [ScoredSet(found, get_version(session, found.series_version_id).number)
            for found in outcome_sets(session, forecast_id)]
    return ForecastView(record, series, get_version(session, record.series_version_id).number,
                        sets,
                        load_series(session, record.series_version_id),
                        forecast_bands(record, load_series(session, series.latest.id)))
