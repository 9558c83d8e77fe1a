"""The 18 ETS classes the ``ets`` family supports, and statsmodels' own model of each built
by hand (statsmodels' ``ETSModel`` arguments, not the family's ``model``), for tests that
compare with statsmodels."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

from backtest.models.ets import EtsSpec

SPECS = [EtsSpec(e, t, s) for e, t, s in itertools.product(
    ("additive", "multiplicative"), ("none", "additive", "damped"),
    ("none", "additive", "multiplicative"))]
_SHORT = {"none": None, "additive": "add", "multiplicative": "mul"}


def statsmodels_model(spec: EtsSpec, y: np.ndarray, period: int) -> ETSModel:
    """statsmodels' ``ETSModel`` of ``spec`` on ``y`` (season period ``period``)."""
    seasonal = _SHORT[spec.season]
    return ETSModel(pd.Series(y, index=pd.RangeIndex(len(y))), error=_SHORT[spec.error],
                    trend=_SHORT["additive" if spec.trend == "damped" else spec.trend],
                    damped_trend=spec.trend == "damped", seasonal=seasonal,
                    seasonal_periods=period if seasonal else None)
