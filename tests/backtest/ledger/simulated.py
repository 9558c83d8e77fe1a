"""Simulated ledgers of a correctly specified model: a Gaussian AR(1) with known parameters.

y_t = mean + phi (y_{t-1} - mean) + e_t, e_t ~ N(0, sigma^2). From origin t the h-step
forecast is mean + phi^h (y_t - mean) with variance sigma^2 (1 - phi^(2h)) / (1 - phi^2)
(the textbook AR(1) forecast, e.g. Box, Jenkins, Reinsel & Ljung 2015, ch. 5), so its
central intervals are exact. A level shift adds ``shift`` to the series from period
``shift_at`` on while the forecasts keep the old mean.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

import numpy as np
from scipy import stats

from backtest.ledger import IssuedForecast, IssuedOutcomes, score_outcomes
from backtest.metrics import mase_scale, rmsse_scale
from backtest.results import FoldResult
from backtest.series import Series, make_series

LEVELS = (80, 95)
START = datetime(2020, 1, 1)
Z_BY_LEVEL = {lv: float(stats.norm.ppf(0.5 + lv / 200)) for lv in LEVELS}


@dataclass(frozen=True)
class Ar1:
    mean: float = 100.0
    phi: float = 0.5
    sigma: float = 5.0
    horizon: int = 3

    def path(self, rng: np.random.Generator, n: int, shift_at: int | None = None,
             shift: float = 0.0) -> np.ndarray:
        y = np.empty(n)
        y[0] = self.mean + rng.normal(0, self.sigma / np.sqrt(1 - self.phi**2))
        noise = rng.normal(0, self.sigma, n)
        for t in range(1, n):
            y[t] = self.mean + self.phi * (y[t - 1] - self.mean) + noise[t]
        if shift_at is not None:
            y[shift_at:] += shift
        return y

    def forecast(self, y: np.ndarray, end: int) -> tuple[np.ndarray, dict, dict]:
        """Point and bounds for h = 1..H from the origin ``end`` (data ``y[:end]``)."""
        h = np.arange(1, self.horizon + 1)
        point = self.mean + self.phi**h * (y[end - 1] - self.mean)
        sd = self.sigma * np.sqrt((1 - self.phi ** (2 * h)) / (1 - self.phi**2))
        z = Z_BY_LEVEL
        return point, {lv: point - z[lv] * sd for lv in LEVELS}, {
            lv: point + z[lv] * sd for lv in LEVELS}

    def issued(self, series: Series, end: int) -> IssuedForecast:
        point, lower, upper = self.forecast(series.values, end)
        data = series.values[:end]
        return IssuedForecast(
            series_key=series.key, fingerprint="simulated", candidate_id="car1",
            candidate_spec={"family": "simulated-ar1"}, label="AR(1) known", season_length=1,
            origin=series.label(end - 1),
            periods=tuple(series.label(end + i) for i in range(self.horizon)),
            point=tuple(point), lower={lv: tuple(b) for lv, b in lower.items()},
            upper={lv: tuple(b) for lv, b in upper.items()}, levels=LEVELS, seed=0,
            params={"phi": self.phi}, scale=mase_scale(data, 1), scale_sq=rmsse_scale(data),
            software={}, warnings=())

    def fold(self, y: np.ndarray, end: int, number: int) -> FoldResult:
        point, lower, upper = self.forecast(y, end)

        def floats(a):
            return tuple(float(v) for v in a)

        return FoldResult(
            series_key="sim", candidate_id="car1", fold=number, origin=str(end),
            train_start="0", train_size=end, reestimated=True, status="ok", reason=None,
            params={"phi": self.phi}, warnings=(),
            periods=tuple(str(end + i) for i in range(self.horizon)),
            actuals=floats(y[end:end + self.horizon]), point=floats(point),
            lower={lv: floats(b) for lv, b in lower.items()},
            upper={lv: floats(b) for lv, b in upper.items()},
            scale=mase_scale(y[:end], 1), scale_sq=rmsse_scale(y[:end]))


def monthly_series(values: np.ndarray) -> Series:
    rows = [(f"{2000 + i // 12}-{i % 12 + 1:02d}", v) for i, v in enumerate(values)]
    return make_series("sim", "P1M", rows, season_length=1)


def ledger(model: Ar1, series: Series, first_end: int, count: int) -> list[IssuedOutcomes]:
    """``count`` monthly issues from origins ``first_end``, ``first_end + 1``, ...,
    each scored against everything observed in ``series``."""
    out = []
    for i in range(count):
        issued = model.issued(series, first_end + i)
        out.append(IssuedOutcomes(i + 1, START + timedelta(days=30 * i), issued,
                                  score_outcomes(issued, series)))
    return out


def with_outcomes_until(history: list[IssuedOutcomes], last_period: str
                        ) -> list[IssuedOutcomes]:
    """The ledger as it stood when ``last_period`` was the latest actual."""
    return [IssuedOutcomes(item.forecast_id, item.issued_at, item.forecast,
                           tuple(o for o in item.outcomes if o.period <= last_period))
            for item in history if item.forecast.origin < last_period]
