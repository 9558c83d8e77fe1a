"""Model families, registered by the name used in a candidate's ``family`` field."""

from collections.abc import Callable, Mapping
from typing import Any

from backtest.models import arima, arima_search, benchmarks, combination, ets, theta
from backtest.models.base import Fit, Forecast, ModelSpec, Params

FAMILIES: dict[str, Callable[[Mapping[str, Any]], ModelSpec]] = {
    "arima": arima.parse,
    "arima_search": arima_search.parse,
    "ets": ets.parse,
    "theta": theta.parse,
    "benchmark": benchmarks.parse,
    "combination": combination.parse,
}

__all__ = ["FAMILIES", "Fit", "Forecast", "ModelSpec", "Params"]
