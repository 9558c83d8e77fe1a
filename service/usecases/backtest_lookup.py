"""Where a candidate was last backtested on a series: its spec and the run's result.

Forecasts are issued only for candidates a succeeded run has backtested on the series, and
monitoring compares a candidate's outcomes with that run's folds.
"""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy.orm import Session

from backtest.results import CandidateInfo, SeriesResult
from storage.results import load_series_result, score_history


@dataclass(frozen=True)
class Backtested:
    """A candidate as a succeeded run backtested it on a series."""

    run_id: int
    result: SeriesResult
    candidate: CandidateInfo


def latest_backtest(session: Session, series_key: str, candidate_id: str) -> Backtested | None:
    """The latest succeeded run that backtested ``candidate_id`` on the series, if any."""
    runs = score_history(session, series_key, candidate_id, metric="mase")
    if not runs:
        return None
    return backtest_in_run(session, runs[-1].run_id, runs[-1].series_version_id, candidate_id)


def backtest_in_run(session: Session, run_id: int, series_version_id: int,
                    candidate_id: str) -> Backtested | None:
    """The candidate in one run's result for one series version, if it was backtested there."""
    result = load_series_result(session, run_id, series_version_id)
    found = next((c for c in result.candidates if c.candidate_id == candidate_id), None)
    return None if found is None else Backtested(run_id, result, found)
