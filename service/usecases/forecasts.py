"""Reading the ledger of issued forecasts: one forecast, a filtered page of them, and what
came true for one (its outcome sets), each with the number of the series version it names.

Issuing is :mod:`service.usecases.issue_forecast`.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sqlalchemy.orm import Session, sessionmaker

from storage.ledger import IssuedRecord, OutcomeSet, get_issued, list_issued, outcome_sets
from storage.series import get_version

__all__ = ["IssuedRecord", "Numbered", "OutcomeSet", "Outcomes", "forecast_outcomes",
           "issued_forecast", "issued_forecasts"]


@dataclass(frozen=True)
class Numbered:
    """An issued forecast with the number of the series version it was fitted on."""

    record: IssuedRecord
    version: int


@dataclass(frozen=True)
class Outcomes:
    """A forecast's outcome sets to show, each with its version number, and which set is
    the current one (scored against the newest version)."""

    forecast: Numbered
    sets: tuple[tuple[OutcomeSet, int], ...]
    current_version_id: int | None


def issued_forecast(sessions: sessionmaker[Session], forecast_id: int) -> Numbered:
    """One issued forecast."""
    with sessions.begin() as session:
        return _numbered(session, [get_issued(session, forecast_id)])[0]


def issued_forecasts(sessions: sessionmaker[Session], *, series_key: str | None = None,
                     candidate_id: str | None = None, issued_from: datetime | None = None,
                     issued_to: datetime | None = None, as_of: datetime | None = None,
                     after_id: int = 0, limit: int) -> list[Numbered]:
    """Issued forecasts, oldest first, filtered, as the ledger stood at ``as_of``."""
    with sessions.begin() as session:
        return _numbered(session, list_issued(
            session, series_key=series_key, candidate_id=candidate_id,
            issued_from=issued_from, issued_to=issued_to, as_of=as_of, after_id=after_id,
            limit=limit))


def forecast_outcomes(sessions: sessionmaker[Session], forecast_id: int, *, every: bool,
                      as_of: datetime | None = None) -> Outcomes:
    """The forecast's outcomes against the newest version scored (by ``as_of``), or with
    ``every`` each set scored so far."""
    with sessions.begin() as session:
        forecast = _numbered(session, [get_issued(session, forecast_id)])[0]
        scored = [(s, get_version(session, s.series_version_id).number)
                  for s in outcome_sets(session, forecast_id)
                  if as_of is None or s.scored_at <= as_of]
    current = max(scored, key=lambda pair: pair[1], default=None)
    shown = scored if every else [pair for pair in [current] if pair]
    return Outcomes(forecast, tuple(shown),
                    current[0].series_version_id if current else None)


def _numbered(session: Session, records: list[IssuedRecord]) -> list[Numbered]:
    numbers: dict[int, int] = {}
    for record in records:
        if record.series_version_id not in numbers:
            numbers[record.series_version_id] = get_version(session,
                                                            record.series_version_id).number
    return [Numbered(r, numbers[r.series_version_id]) for r in records]
