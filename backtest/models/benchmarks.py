"""Benchmark forecasts with closed-form point forecasts and Gaussian prediction intervals.

Formulas (Hyndman & Athanasopoulos, *Forecasting: Principles and Practice*, 3rd ed.,
2021, section 5.5, table of h-step standard deviations; recalled, checked against the
written-out examples in the tests): with residual standard deviation ``s`` estimated as
``sqrt(sum(e^2) / (T - K - M))`` (K parameters, M residuals lost at the start),

- mean:            forecast mean(y);             sd_h = s * sqrt(1 + 1/T)
- naive:           forecast y_T;                 sd_h = s * sqrt(h)
- seasonal naive:  forecast y_{T+h-m(k+1)};      sd_h = s * sqrt(k + 1), k = floor((h-1)/m)
- drift:           forecast y_T + h*b, b = (y_T - y_1)/(T - 1);  sd_h = s * sqrt(h (1 + h/T))

The engine re-estimates these at every origin; all of a series' windows are computed
together from cumulative sums (:mod:`.benchmark_windows`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, Literal, cast

import numpy as np

from backtest.labels import BENCHMARK_NAMES, benchmark_label
from backtest.models.base import (
    Fit,
    Forecast,
    ModelSpec,
    Params,
    choice,
    normal_bounds,
    take_fields,
)
from backtest.models.benchmark_windows import window_forecasts
from backtest.models.origin_bounds import forecasts_by_origin
from backtest.transforms import Transform

Method = Literal["naive", "seasonal_naive", "drift", "mean"]


@dataclass(frozen=True)
class BenchmarkSpec(ModelSpec):
    """One of the four standard benchmark methods."""

    family: ClassVar[str] = "benchmark"
    closed_form: ClassVar[bool] = True
    method: Method = "seasonal_naive"
    transform: Transform = Transform()

    def body(self) -> dict[str, Any]:
        return {"method": self.method}

    def label(self, season_length: int) -> str:
        return benchmark_label(self.method, season_length)

    def min_train(self, season_length: int) -> int:
        return {"naive": 2, "mean": 2, "drift": 3, "seasonal_naive": season_length + 1}[
            self.method]

    def fit(self, y: np.ndarray, season_length: int, *,
            start_params: Params | None = None) -> Fit:
        """Closed form: ``start_params`` is accepted for a uniform interface and not used."""
        return self.fit_forecast(y, season_length, 1, (), 0)[0]

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        return self.fit_forecast(y, season_length, horizon, levels, seed)[1]

    # a family takes only the fit options its class flags declare (see ModelSpec.fit)
    def fit_forecast(self, y: np.ndarray, season_length: int, horizon: int,  # type: ignore[override]
                     levels: tuple[int, ...], seed: int, *,
                     start_params: Params | None = None) -> tuple[Fit, Forecast]:
        y = np.asarray(y, dtype=float)
        n, h = len(y), np.arange(1, horizon + 1)
        m = season_length
        if self.method == "mean":
            mean = np.full(horizon, y.mean())
            s = np.sqrt(np.sum((y - y.mean()) ** 2) / (n - 1))
            sd = s * np.sqrt(1 + 1 / n) * np.ones(horizon)
            params = {"mean": float(y.mean()), "sigma": float(s)}
        elif self.method == "naive":
            mean = np.full(horizon, y[-1])
            s = np.sqrt(np.mean(np.diff(y) ** 2))
            sd = s * np.sqrt(h)
            params = {"sigma": float(s)}
        elif self.method == "drift":
            slope = (y[-1] - y[0]) / (n - 1)
            mean = y[-1] + h * slope
            s = np.sqrt(np.sum((np.diff(y) - slope) ** 2) / (n - 2))
            sd = s * np.sqrt(h * (1 + h / n))
            params = {"drift": float(slope), "sigma": float(s)}
        else:
            k = (h - 1) // m
            mean = y[n + h - 1 - m * (k + 1)]
            s = np.sqrt(np.mean((y[m:] - y[:-m]) ** 2))
            sd = s * np.sqrt(k + 1)
            params = {"sigma": float(s)}
        return Fit(params), normal_bounds(mean, sd, levels)

    def fit_forecast_windows(self, y: np.ndarray, season_length: int,
                             windows: Sequence[tuple[int, int]], horizon: int,
                             levels: tuple[int, ...], seeds: Sequence[int]
                             ) -> list[tuple[Fit, Forecast]]:
        """Every window ``y[start:end]`` at once, from cumulative sums over ``y``; a subclass
        that redefines ``fit_forecast`` gets it called per window instead."""
        if type(self).fit_forecast is not BenchmarkSpec.fit_forecast:
            return super().fit_forecast_windows(y, season_length, windows, horizon, levels,
                                                seeds)
        starts, ends = np.asarray(windows, dtype=int).reshape(-1, 2).T
        table = window_forecasts(self.method, np.asarray(y, dtype=float), season_length,
                                 starts, ends, horizon)
        rows = [dict(zip(table.params, values))
                for values in zip(*(v.tolist() for v in table.params.values()))]
        return list(zip((Fit(p) for p in rows),
                        forecasts_by_origin(table.mean, table.sd, levels)))


def parse(body: Mapping[str, Any]) -> BenchmarkSpec:
    """Read a ``benchmark`` candidate body."""
    fields = take_fields(body, "benchmark", {"method"})
    method = choice(fields.get("method"), tuple(BENCHMARK_NAMES), "benchmark method")
    return BenchmarkSpec(cast(Method, method))
