"""Monitoring a champion: its issued forecasts against what happened and what it promised.

``monitor`` takes the issued forecasts of one series and candidate with their outcomes so
far. When several were issued from the same origin (a re-issue), only the latest counts
(latest ``issued_at``, then highest ``forecast_id``). It returns the realised accuracy per
target period beside the backtest's expectation, and three flags, each documented in its
module and each tested on the one-step outcomes (one per origin, so no two overlap):

- ``coverage`` (:mod:`.coverage_flag`): Kupiec's test with exact binomial p-values, or the
  ``excessive`` calibration zone, per level;
- ``accuracy`` (:mod:`.accuracy_flag`): one-sided Mann-Whitney test of realised against
  backtest scaled absolute errors;
- ``level_shift`` (:mod:`.level_shift`): CUSUM of standardised errors with the Brown,
  Durbin & Evans (1975) boundary.

Each is raised with probability at most ``false_alarm`` for a well-specified model. A
rule with too little data to test is ``not_enough_data``, never ``clear``
(:class:`~backtest.ledger.flag.Flag`); :func:`untested` is the report of a candidate with
no issued forecast yet.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from backtest.ledger.accuracy_flag import accuracy_flag
from backtest.ledger.coverage_flag import coverage_flags
from backtest.ledger.errors import LedgerError
from backtest.ledger.expectation import Expectation, expectation_from_folds
from backtest.ledger.flag import Flag
from backtest.ledger.issue import IssuedForecast
from backtest.ledger.level_shift import level_shift_flag
from backtest.ledger.outcomes import Outcome
from backtest.ledger.realised import RealisedPoint, realised_points
from backtest.results import jsonable_dict

__all__ = ["Expectation", "Flag", "IssuedOutcomes", "MonitoringReport", "RealisedPoint",
           "expectation_from_folds", "monitor", "untested"]


@dataclass(frozen=True)
class IssuedOutcomes:
    """One issued forecast (its ledger id and time) with its outcomes so far."""

    forecast_id: int
    issued_at: datetime
    forecast: IssuedForecast
    outcomes: tuple[Outcome, ...]


@dataclass(frozen=True)
class MonitoringReport:
    """Realised accuracy over time, the backtest's expectation and the flags."""

    series_key: str
    candidate_id: str
    realised: tuple[RealisedPoint, ...]
    expectation: Expectation | None
    flags: tuple[Flag, ...]

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dictionary (non-finite floats become ``None``)."""
        return jsonable_dict(self)


def monitor(history: Sequence[IssuedOutcomes], expectation: Expectation | None, *,
            false_alarm: float = 0.05) -> MonitoringReport:
    """Realised accuracy and flags for the issued forecasts of one series and candidate.

    Raises :class:`LedgerError` for an empty history, one mixing series or candidates, an
    expectation of another candidate, or a false-alarm rate outside (0, 0.5).
    """
    series_key, candidate_id = _checked(history, expectation, false_alarm)
    latest = _latest_per_origin(history)
    one_step = [(item.forecast, o) for item in latest for o in item.outcomes if o.horizon == 1]
    levels = sorted({level for item in latest for level in item.forecast.levels})
    flags = _flags(one_step, levels, expectation, false_alarm)
    realised = realised_points([o for item in latest for o in item.outcomes], expectation)
    return MonitoringReport(series_key, candidate_id, realised, expectation, flags)


def untested(series_key: str, candidate_id: str, expectation: Expectation | None, *,
             false_alarm: float = 0.05) -> MonitoringReport:
    """The report of a candidate with no issued forecast: every rule ``not_enough_data``."""
    return MonitoringReport(series_key, candidate_id, (), expectation,
                            _flags([], [], expectation, false_alarm))


def _flags(one_step: list[tuple[IssuedForecast, Outcome]], levels: Sequence[int],
           expectation: Expectation | None, false_alarm: float) -> tuple[Flag, ...]:
    steps = [o for _, o in one_step]
    return (*coverage_flags(steps, false_alarm, levels),
            accuracy_flag(steps, expectation, false_alarm),
            level_shift_flag(one_step, false_alarm))


def _checked(history: Sequence[IssuedOutcomes], expectation: Expectation | None,
             false_alarm: float) -> tuple[str, str]:
    if not history:
        raise LedgerError("there are no issued forecasts to monitor")
    if (isinstance(false_alarm, bool) or not isinstance(false_alarm, int | float)
            or not 0.0 < false_alarm < 0.5):
        raise LedgerError(f"false_alarm must be a rate between 0 and 0.5, got {false_alarm!r}")
    first = history[0].forecast
    for item in history:
        if (item.forecast.series_key, item.forecast.candidate_id) != (
                first.series_key, first.candidate_id):
            raise LedgerError(f"forecast {item.forecast_id} is of series "
                              f"{item.forecast.series_key!r} and candidate "
                              f"{item.forecast.candidate_id!r}; the history is of "
                              f"{first.series_key!r} and {first.candidate_id!r}")
    if expectation is not None and expectation.candidate_id != first.candidate_id:
        raise LedgerError(f"the expectation is of candidate {expectation.candidate_id!r}, "
                          f"the issued forecasts of {first.candidate_id!r}")
    return first.series_key, first.candidate_id


def _latest_per_origin(history: Sequence[IssuedOutcomes]) -> list[IssuedOutcomes]:
    """The last issue from each origin, in origin order."""
    latest: dict[str, IssuedOutcomes] = {}
    for item in sorted(history, key=lambda i: (i.issued_at, i.forecast_id)):
        latest[item.forecast.origin] = item
    return [latest[origin] for origin in sorted(latest)]
