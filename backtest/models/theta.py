"""The Theta method (Assimakopoulos & Nikolopoulos 2000) as statsmodels' ThetaModel.

Parameters (trend slope ``b0``, smoothing ``alpha``, innovation variance ``sigma2``) come
from statsmodels' two-step estimate; the variance comes from its ARIMA(0,1,1)-with-drift
representation (Hyndman & Billah 2003). Estimation is cheap and closed-form apart from a
one-parameter smoother, so the family is re-estimated at every origin.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar, Literal, cast

import numpy as np
from statsmodels.tsa.forecasting.theta import ThetaModel

from backtest.labels import theta_label
from backtest.models.base import (
    Fit,
    Forecast,
    ModelSpec,
    Params,
    choice,
    optional_period,
    take_fields,
)
from backtest.transforms import Transform, parse_transform

_METHOD = {"auto": "auto", "additive": "add", "multiplicative": "mul"}
ThetaSeason = Literal["test", "always", "never"]
Decomposition = Literal["auto", "additive", "multiplicative"]


@dataclass(frozen=True)
class ThetaSpec(ModelSpec):
    """Theta forecasts, optionally on seasonally adjusted data."""

    family: ClassVar[str] = "theta"
    closed_form: ClassVar[bool] = True
    season: ThetaSeason = "test"
    decomposition: Decomposition = "auto"
    period: int | None = None
    transform: Transform = Transform()

    def body(self) -> dict[str, Any]:
        return {"season": self.season, "decomposition": self.decomposition,
                "period": self.period, "transform": self.transform.canonical()}

    def label(self, season_length: int) -> str:
        return theta_label(self._seasonal(season_length), self.season, self.decomposition,
                           self.period or season_length, self.transform)

    def _seasonal(self, season_length: int) -> bool:
        return self.season != "never" and (self.period or season_length) >= 2

    @property
    def needs_positive(self) -> bool:
        return self.decomposition == "multiplicative" or self.transform.needs_positive

    def min_train(self, season_length: int) -> int:
        return 2 * (self.period or season_length) + 2 if self._seasonal(season_length) else 6

    def _fit(self, y: np.ndarray, season_length: int) -> Any:
        seasonal = self._seasonal(season_length)
        model = ThetaModel(y, period=(self.period or season_length) if seasonal else 1,
                           deseasonalize=seasonal, use_test=self.season == "test",
                           method=_METHOD[self.decomposition])
        return model.fit()

    # a family takes only the fit options its class flags declare (see ModelSpec.fit)
    def fit(self, y: np.ndarray, season_length: int) -> Fit:  # type: ignore[override]
        fitted = self._fit(y, season_length)
        b0, alpha = (float(v) for v in fitted.params)
        return Fit({"b0": b0, "alpha": alpha, "sigma2": float(fitted.sigma2)}, fitted)

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        return self.fit_forecast(y, season_length, horizon, levels, seed)[1]

    # a family takes only the fit options its class flags declare (see ModelSpec.fit)
    def fit_forecast(self, y: np.ndarray, season_length: int, horizon: int,  # type: ignore[override]
                     levels: tuple[int, ...], seed: int) -> tuple[Fit, Forecast]:
        fit = self.fit(y, season_length)
        fitted = fit.raw
        mean = np.asarray(fitted.forecast(horizon), dtype=float)
        lower, upper = {}, {}
        for level in levels:
            bounds = fitted.prediction_intervals(horizon, alpha=1 - level / 100)
            lower[level] = bounds["lower"].to_numpy(float)
            upper[level] = bounds["upper"].to_numpy(float)
        return fit, Forecast(mean, lower, upper)


def parse(body: Mapping[str, Any]) -> ThetaSpec:
    """Read a ``theta`` candidate body."""
    fields = take_fields(body, "theta", {"season", "decomposition", "period", "transform"})
    season = choice(fields.get("season", "test"), ("test", "always", "never"), "theta season")
    decomposition = choice(fields.get("decomposition", "auto"), tuple(_METHOD),
                           "theta decomposition")
    period = optional_period(fields.get("period"), "theta period")
    transform = parse_transform(fields.get("transform"))
    return ThetaSpec(cast(ThetaSeason, season), cast(Decomposition, decomposition), period,
                     transform)
