"""Issuing a forecast: fit a candidate on a series version and record it in the ledger.

The candidate is the series' current champion unless one is named; either way it must
have been backtested on the series by a succeeded run, whose stored spec is the one
fitted. The fit runs outside any transaction; the record is written in one. Identical
inputs (version, candidate, horizon, levels, seed) return the forecast issued before. A
candidate with empirical intervals takes them from that run's folds.
"""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import Candidate, parse_candidate
from backtest.ledger import issue_forecast
from backtest.results import FoldResult
from backtest.series import Series
from service.errors import FieldError, InvalidInputError
from service.limits import check_horizon_and_levels, check_level_values
from service.settings import Settings
from service.usecases.backtest_lookup import latest_backtest
from service.usecases.transactions import write
from storage.errors import ConflictError, NotFoundError
from storage.ledger import IssuedRecord, current_champion, record_issued_forecast
from storage.series import get_series, load_series, version_by_number


@dataclass(frozen=True)
class IssueRequest:
    """What to issue; ``version`` and ``candidate_id`` default to the latest and the champion."""

    series_key: str
    horizon: int
    levels: tuple[int, ...] = (80, 95)
    seed: int = 0
    version: int | None = None
    candidate_id: str | None = None


@dataclass(frozen=True)
class _Inputs:
    version_id: int
    series: Series
    candidate: Candidate
    folds: tuple[FoldResult, ...]


def issue(sessions: sessionmaker[Session], request: IssueRequest, settings: Settings, *,
          actor: str) -> tuple[IssuedRecord, bool]:
    """The ledger record of the forecast, and whether this call created it; the horizon and
    levels are checked first (their values, then the settings' limits, as for a run's plan)."""
    check_level_values(request.levels, "")
    check_horizon_and_levels(request.horizon, len(request.levels), settings, "")
    with sessions.begin() as session:
        inputs = _inputs(session, request)
    forecast = issue_forecast(inputs.series, inputs.candidate, horizon=request.horizon,
                              levels=request.levels, seed=request.seed,
                              backtest_folds=inputs.folds)

    def record(session: Session) -> tuple[IssuedRecord, bool]:
        return record_issued_forecast(session, series_version_id=inputs.version_id,
                                      forecast=forecast, actor=actor)

    try:
        return write(sessions, record)
    except ConflictError:
        # The same forecast issued twice at once: the loser finds the winner's record.
        return write(sessions, record)


def _inputs(session: Session, request: IssueRequest) -> _Inputs:
    key = request.series_key
    try:
        version = (version_by_number(session, key, request.version) if request.version
                   else get_series(session, key).latest)
    except NotFoundError as exc:
        raise _invalid("/version" if request.version else "/series_key", str(exc)) from None
    candidate_id = request.candidate_id or _champion_id(session, key)
    backtested = latest_backtest(session, key, candidate_id)
    if backtested is None:
        raise _invalid("/candidate_id", f"candidate {candidate_id} has not been backtested on "
                       f"series {key!r} by a succeeded run; forecasts are issued only for "
                       "backtested candidates")
    folds = tuple(f for f in backtested.result.folds if f.candidate_id == candidate_id)
    return _Inputs(version.id, load_series(session, version.id),
                   parse_candidate(backtested.candidate.spec), folds)


def _champion_id(session: Session, series_key: str) -> str:
    champion = current_champion(session, series_key)
    if champion is None:
        raise _invalid("/candidate_id", f"series {series_key!r} has no champion: choose one "
                       "first, or name the candidate to issue")
    return champion.candidate_id


def _invalid(pointer: str, message: str) -> InvalidInputError:
    return InvalidInputError(message, errors=[FieldError("body", pointer, message)])
