"""Model families, registered by the name used in a candidate's ``family`` field."""

from collections.abc import Callable, Mapping

from backtest.models import arima, benchmarks, ets, theta
from backtest.models.base import Fit, Forecast, ModelSpec, Params

FAMILIES: dict[str, Callable[[Mapping], ModelSpec]] = {
    "arima": arima.parse,
    "ets": ets.parse,
    "theta": theta.parse,
    "benchmark": benchmarks.parse,
}

__all__ = ["FAMILIES", "Fit", "Forecast", "ModelSpec", "Params"]
