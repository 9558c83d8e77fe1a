"""What the ledger part of a series' page shows, read in one transaction: the champion
choices, the issued forecasts with their current outcomes, the champion's monitoring report,
and the latest issued forecast with its history and the actuals known now."""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy.orm import Session

from backtest.series import Series
from service.usecases.monitoring import Monitored, monitor_series
from service.views.charts.fan import ForecastBands
from storage.ledger import (
    ChampionChoice,
    IssuedRecord,
    OutcomeSet,
    champion_history,
    current_outcomes,
    list_issued,
)
from storage.series import SeriesInfo, get_series, get_version, load_series

#: Issued forecasts listed on the page, newest first.
SHOWN_FORECASTS = 24
#: Issued forecasts read per query.
PAGE = 500


@dataclass(frozen=True)
class IssuedRow:
    """An issued forecast, the number of the version it was fitted on, and its outcomes
    against the newest version scored so far (with that version's number)."""

    record: IssuedRecord
    version: int
    outcomes: OutcomeSet | None
    scored_version: int | None


@dataclass(frozen=True)
class LatestForecast:
    """The latest issued forecast with the actuals known now, and the data it was fitted on."""

    record: IssuedRecord
    version: int
    bands: ForecastBands
    history: Series


@dataclass(frozen=True)
class LedgerView:
    """The ledger of one series as its page shows it: every champion choice (oldest first),
    the newest issued forecasts (newest first) out of ``issued_total``, the champion's
    monitoring and the latest issued forecast."""

    series: SeriesInfo
    choices: list[ChampionChoice]
    issued: list[IssuedRow]
    issued_total: int
    monitored: Monitored | None
    latest: LatestForecast | None


def load_ledger(session: Session, series_key: str) -> LedgerView:
    """The ledger of a series; ``NotFoundError`` if the series is unknown."""
    series = get_series(session, series_key)
    choices = champion_history(session, series_key)
    records = sorted(_every_issued(session, series_key),
                     key=lambda r: (r.issued_at, r.forecast_id), reverse=True)
    numbers: dict[int, int] = {}
    rows = [_row(session, record, numbers) for record in records[:SHOWN_FORECASTS]]
    monitored = (monitor_series(session, series_key, choices[-1].candidate_id) if choices
                 else None)
    latest = _latest(session, rows[0], series) if rows else None
    return LedgerView(series, choices, rows, len(records), monitored, latest)


def _every_issued(session: Session, series_key: str) -> list[IssuedRecord]:
    """Every forecast issued for the series, page by page (the ledger lists by id)."""
    found: list[IssuedRecord] = []
    while True:
        page = list_issued(session, series_key=series_key,
                           after_id=found[-1].forecast_id if found else 0, limit=PAGE)
        found.extend(page)
        if len(page) < PAGE:
            return found


def _latest(session: Session, row: IssuedRow, series: SeriesInfo) -> LatestForecast:
    now = load_series(session, series.latest.id)
    return LatestForecast(row.record, row.version, forecast_bands(row.record, now),
                          load_series(session, row.record.series_version_id))


def _row(session: Session, record: IssuedRecord, numbers: dict[int, int]) -> IssuedRow:
    outcomes = current_outcomes(session, record.forecast_id)
    scored = None if outcomes is None else _number(session, outcomes.series_version_id, numbers)
    return IssuedRow(record, _number(session, record.series_version_id, numbers), outcomes,
                     scored)


def _number(session: Session, version_id: int, numbers: dict[int, int]) -> int:
    if version_id not in numbers:
        numbers[version_id] = get_version(session, version_id).number
    return numbers[version_id]


def forecast_bands(record: IssuedRecord, now: Series) -> ForecastBands:
    """The forecast with the actuals ``now`` holds for its periods (not interpolated ones)."""
    f = record.forecast
    known = {label: float(value) for label, value in zip(now.labels(), now.values)
             if label not in now.filled}
    return ForecastBands(f.origin, f.periods, f.point, f.lower, f.upper,
                         tuple(known.get(period) for period in f.periods))
