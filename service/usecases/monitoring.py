"""Monitoring a series' candidate: its outcomes so far beside what its backtest promised.

The expectation comes from the candidate's folds in the latest succeeded run that
backtested it on the series (read alone, not the whole stored unit), without the target
periods the backtested version's fill policy made; the candidate is the series' current
champion unless one is named.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sqlalchemy.orm import Session

from backtest.ledger import (
    Expectation,
    LedgerError,
    MonitoringReport,
    expectation_from_folds,
    monitor,
    untested,
)
from service.errors import FieldError, InvalidInputError
from storage.ledger import current_champion, current_champions, issued_with_outcomes
from storage.results import load_candidate_folds, score_history
from storage.series import filled_periods, get_series
from storage.specs import candidate_label


@dataclass(frozen=True)
class Monitored:
    """A monitoring report, with whether its candidate is the series' champion and how
    many forecasts of it were issued."""

    report: MonitoringReport
    candidate_label: str | None
    is_champion: bool
    forecasts: int


def monitor_series(session: Session, series_key: str, candidate_id: str | None = None,
                   as_of: datetime | None = None) -> Monitored:
    """The report of ``candidate_id`` (default: the champion) on one series; with ``as_of``,
    as it stood then: the champion, forecasts, outcomes and runs recorded by that time."""
    get_series(session, series_key)
    champion = current_champion(session, series_key, as_of)
    if not candidate_id:
        if champion is None:
            message = f"series {series_key!r} has no champion; name the candidate to monitor"
            raise InvalidInputError(message, errors=[FieldError("query", "/candidate_id",
                                                                message)])
        candidate_id = champion.candidate_id
    history = issued_with_outcomes(session, series_key, candidate_id, as_of)
    is_champion = champion is not None and champion.candidate_id == candidate_id
    expectation = _expectation(session, series_key, candidate_id, as_of)
    report = (monitor(history, expectation) if history
              else untested(series_key, candidate_id, expectation))
    return Monitored(report, candidate_label(session, series_key, candidate_id), is_champion,
                     len(history))


def _expectation(session: Session, series_key: str, candidate_id: str,
                 as_of: datetime | None) -> Expectation | None:
    runs = [run for run in score_history(session, series_key, candidate_id, metric="mase")
            if as_of is None or run.finished_at <= as_of]
    if not runs:
        return None
    latest = runs[-1]
    folds = load_candidate_folds(session, latest.run_id, latest.series_version_id, candidate_id)
    try:
        return expectation_from_folds(folds, candidate_id, latest.run_id,
                                      filled_periods(session, latest.series_version_id))
    except LedgerError:  # every fold of the candidate failed: nothing was promised
        return None


def monitor_champions(session: Session, prefix: str | None = None, *, offset: int = 0,
                      limit: int | None = None,
                      as_of: datetime | None = None) -> tuple[list[Monitored], bool]:
    """The report of every series' champion (whose key starts with ``prefix``), by key:
    ``limit`` series from the ``offset``-th on (all by default), and whether more follow.
    Only the series of the page are monitored, so a page costs the same however many
    series the store holds."""
    champions = current_champions(session, as_of)
    keys = [key for key in sorted(champions) if key.startswith(prefix or "")][offset:]
    page = keys if limit is None else keys[:limit]
    return ([monitor_series(session, key, champions[key].candidate_id, as_of) for key in page],
            len(page) < len(keys))
