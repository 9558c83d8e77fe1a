"""The forecast ledger's computation: issued forecasts, their outcomes and monitoring."""

from backtest.ledger.errors import LedgerError
from backtest.ledger.issue import IssuedForecast, issue_forecast
from backtest.ledger.monitoring import (
    Expectation,
    Flag,
    IssuedOutcomes,
    MonitoringReport,
    RealisedPoint,
    expectation_from_folds,
    monitor,
    untested,
)
from backtest.ledger.outcomes import Outcome, realised_mase, score_outcomes

__all__ = [
    "Expectation",
    "Flag",
    "IssuedForecast",
    "IssuedOutcomes",
    "LedgerError",
    "MonitoringReport",
    "Outcome",
    "RealisedPoint",
    "expectation_from_folds",
    "issue_forecast",
    "monitor",
    "realised_mase",
    "score_outcomes",
    "untested",
]
