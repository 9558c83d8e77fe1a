"""The ledger package exports the contract's names (its purity: tests/backtest/test_purity.py)."""

import backtest.ledger as ledger
from backtest.errors import BacktestError

CONTRACT = {"LedgerError", "IssuedForecast", "issue_forecast", "Outcome", "score_outcomes",
            "Expectation", "expectation_from_folds", "IssuedOutcomes", "Flag",
            "RealisedPoint", "MonitoringReport", "monitor"}


def test_contract_names_are_exported_and_the_error_is_a_backtest_error():
    assert set(ledger.__all__) >= CONTRACT
    assert all(hasattr(ledger, name) for name in ledger.__all__)
    assert ledger.LedgerError.code == "invalid_ledger_input"
    assert issubclass(ledger.LedgerError, BacktestError)
