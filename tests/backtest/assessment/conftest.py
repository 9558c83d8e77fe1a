"""The airline model fitted once per test session, shared by the assessment tests."""

from __future__ import annotations

import warnings

import pytest

from backtest.models.arima import ArimaSpec


@pytest.fixture(scope="session")
def airline(log_air):
    """ARIMA(0,1,1)×(0,1,1), season 12, on log Series G: (spec, fit, y, warnings captured)."""
    spec = ArimaSpec(order=(0, 1, 1), seasonal=(0, 1, 1), period=12)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fit = spec.fit(log_air, 12)
    return spec, fit, log_air, [str(w.message) for w in caught]
