"""Errors raised by the backtest engine; each carries a stable ``code`` for callers to map."""


class BacktestError(Exception):
    """Base class for every error the engine raises on bad input."""

    code = "backtest_error"


class SeriesError(BacktestError):
    """A series is malformed: bad periods, values, or too short for the plan."""

    code = "invalid_series"


class CandidateError(BacktestError):
    """A candidate model specification is malformed or impossible."""

    code = "invalid_candidate"


class PlanError(BacktestError):
    """A backtest plan is malformed or impossible."""

    code = "invalid_plan"
