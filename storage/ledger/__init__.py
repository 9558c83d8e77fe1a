"""storage.ledger.forecasts."""
