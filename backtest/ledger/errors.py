"""The error the forecast ledger raises on bad input."""

from backtest.errors import BacktestError


class LedgerError(BacktestError):
    """An issued forecast, its actuals or a monitoring request is malformed or impossible."""

    code = "invalid_ledger_input"
