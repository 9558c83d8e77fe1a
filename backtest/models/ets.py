"""Exponential smoothing state-space models ETS(error, trend, season) via statsmodels ETSModel.

Interval bounds use statsmodels' analytic variance where the model class has one (linear,
additive-error models) and otherwise simulated sample paths; the simulation is seeded
from the plan's seed and the fold, so results are reproducible.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import ClassVar, Literal

import numpy as np
import pandas as pd
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

from backtest.errors import CandidateError
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

_CODE = {"none": "N", "additive": "A", "multiplicative": "M", "damped": "Ad"}
_SHORT = {"none": None, "additive": "add", "multiplicative": "mul", "damped": "add"}
_SIMULATIONS = 1000


@dataclass(frozen=True)
class EtsSpec(ModelSpec):
    """ETS with additive or multiplicative error, optional (damped) trend and season."""

    family: ClassVar[str] = "ets"
    error: Literal["additive", "multiplicative"] = "additive"
    trend: Literal["none", "additive", "damped"] = "none"
    season: Literal["none", "additive", "multiplicative"] = "none"
    period: int | None = None
    transform: Transform = Transform()

    def body(self) -> dict:
        return {"error": self.error, "trend": self.trend, "season": self.season,
                "period": self.period, "transform": self.transform.canonical()}

    def label(self, season_length: int) -> str:
        text = f"ETS({_CODE[self.error]},{_CODE[self.trend]},{_CODE[self.season]})"
        if self.season != "none":
            text += f"[{self.season_period(season_length)}]"
        return text + self.transform.suffix()

    def season_period(self, season_length: int) -> int:
        return self.period or season_length

    @property
    def needs_positive(self) -> bool:
        multiplicative = "multiplicative" in (self.error, self.season)
        return multiplicative or self.transform.needs_positive

    def check(self, season_length: int) -> None:
        if self.season != "none" and self.season_period(season_length) < 2:
            raise CandidateError(f"{self.label(season_length)}: a seasonal component needs a "
                                 "period of at least 2, and the series has season length 1")

    def min_train(self, season_length: int) -> int:
        if self.season != "none":
            return 2 * self.season_period(season_length) + 2
        return 10

    def model(self, y: np.ndarray, season_length: int) -> ETSModel:
        """The statsmodels model; ETSModel's prediction needs a pandas index."""
        seasonal = _SHORT[self.season]
        return ETSModel(
            pd.Series(y, index=pd.RangeIndex(len(y))),
            error=_SHORT[self.error], trend=_SHORT[self.trend],
            damped_trend=self.trend == "damped", seasonal=seasonal,
            seasonal_periods=self.season_period(season_length) if seasonal else None,
        )

    def fit(self, y: np.ndarray, season_length: int) -> Fit:
        model = self.model(y, season_length)
        fitted = model.fit(disp=False)
        return Fit(dict(zip(model.param_names, map(float, fitted.params))), fitted)

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        model = self.model(y, season_length)
        smoothed = model.smooth(np.array([params[n] for n in model.param_names]))
        prediction = smoothed.get_prediction(
            start=len(y), end=len(y) + horizon - 1,
            simulate_repetitions=_SIMULATIONS, rng=np.random.default_rng(seed))
        mean = np.asarray(prediction.predicted_mean, dtype=float)
        lower, upper = {}, {}
        for level in levels:
            frame = prediction.summary_frame(alpha=1 - level / 100)
            lower[level] = frame["pi_lower"].to_numpy(float)
            upper[level] = frame["pi_upper"].to_numpy(float)
        return Forecast(mean, lower, upper)


def parse(body: Mapping) -> EtsSpec:
    """Read an ``ets`` candidate body."""
    fields = take_fields(body, "ets", {"error", "trend", "season", "period", "transform"})
    error = choice(fields.get("error", "additive"), ("additive", "multiplicative"), "ets error")
    trend = choice(fields.get("trend", "none"), ("none", "additive", "damped"), "ets trend")
    season = choice(fields.get("season", "none"), ("none", "additive", "multiplicative"),
                    "ets season")
    period = optional_period(fields.get("period"), "ets period")
    if period is not None and season == "none":
        raise CandidateError("ets: a period is given but season is \"none\"")
    transform = parse_transform(fields.get("transform"))
    return EtsSpec(error, trend, season, period, transform)  # type: ignore[arg-type]
