"""Exponential smoothing state-space models ETS(error, trend, season) via statsmodels ETSModel.

Interval bounds use statsmodels' analytic variance where the model class has one (linear,
additive-error models) and otherwise simulated sample paths; the simulation is seeded
from the plan's seed and the fold, so results are reproducible.

Forecasts from an estimation origin, and from a stretch of origins with fixed parameters,
come from one compiled smoothing pass (:func:`.fast_ets_kernel.smoothing_pass`, the
operations of statsmodels' smoother) and the recursions of :mod:`.ets_stretch`, and equal
statsmodels' per-origin predictions; statsmodels' own route builds a model and a results
object, with its numerical covariance, for every origin.

``estimator="fast"`` estimates with the compiled estimator instead (:mod:`.fast_ets`, the
same likelihood, bounds and start values); the forecasts come from the same pass at those
estimates, and the results object (when kept) from the statsmodels model. The parameters
then carry ``estimator`` (1 fast, 0 the fast estimator failed and the reference estimated
the fold, with a :class:`~.fast_fallback.EstimatorFallback` warning giving the reason).
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, Literal, cast

import numpy as np
import pandas as pd
from statsmodels.tools.sm_exceptions import ConvergenceWarning
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

from backtest.errors import CandidateError
from backtest.labels import ets_label
from backtest.models import fast_ets_kernel as kernel
from backtest.models.base import (
    Estimator,
    Fit,
    Forecast,
    ModelSpec,
    Params,
    choice,
    optional_period,
    take_fields,
)
from backtest.models.ets_stretch import (
    EtsForm,
    origin_states,
    point_forecasts,
    relative_variance,
    simulated_bounds,
)
from backtest.models.fast_ets import EtsClass, fast_fit
from backtest.models.fast_fallback import ESTIMATOR_KEY
from backtest.models.origin_bounds import forecasts_by_origin
from backtest.transforms import Transform, parse_transform

_SHORT = {"none": None, "additive": "add", "multiplicative": "mul", "damped": "add"}
_SIMULATIONS = 1000
ErrorForm = Literal["additive", "multiplicative"]
TrendForm = Literal["none", "additive", "damped"]
SeasonForm = Literal["none", "additive", "multiplicative"]


@dataclass(frozen=True)
class EtsSpec(ModelSpec):
    """ETS with additive or multiplicative error, optional (damped) trend and season."""

    family: ClassVar[str] = "ets"
    warm_startable: ClassVar[bool] = True
    raw_optional: ClassVar[bool] = True
    fast_estimable: ClassVar[bool] = True
    error: ErrorForm = "additive"
    trend: TrendForm = "none"
    season: SeasonForm = "none"
    period: int | None = None
    transform: Transform = Transform()

    def body(self) -> dict[str, Any]:
        return {"error": self.error, "trend": self.trend, "season": self.season,
                "period": self.period, "transform": self.transform.canonical()}

    def label(self, season_length: int) -> str:
        return ets_label(self.error, self.trend, self.season, self.season_period(season_length),
                         self.transform)

    def season_period(self, season_length: int) -> int:
        return self.period or season_length

    @property
    def needs_positive(self) -> bool:
        multiplicative = "multiplicative" in (self.error, self.season)
        return multiplicative or self.transform.needs_positive

    @property
    def gaussian(self) -> bool:
        """Only the linear classes (additive error and season) have Gaussian forecasts."""
        return self.error == "additive" and self.season != "multiplicative"

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

    def fit(self, y: np.ndarray, season_length: int, *,
            start_params: Params | None = None, estimator: Estimator = "reference",
            keep_raw: bool = True) -> Fit:
        """Estimate on ``y``; ``start_params`` (e.g. a previous estimate) seeds the optimiser
        instead of statsmodels' default start values. ``keep_raw=False`` lets the fast
        estimator skip building statsmodels' results object."""
        if estimator == "fast":
            return fast_fit(self, y, season_length, start_params, keep_raw)
        return self.reference_fit(y, season_length, start_params=start_params)

    def reference_fit(self, y: np.ndarray, season_length: int, *,
                      start_params: Params | None = None) -> Fit:
        """statsmodels' own estimation (the reference estimator)."""
        model = self.model(y, season_length)
        start = None if start_params is None else _vector(model, start_params)
        fitted = model.fit(start_params=start, disp=False)
        converged = (getattr(fitted, "mle_retvals", None) or {}).get("converged")
        return Fit(dict(zip(model.param_names, map(float, fitted.params))), fitted,
                   None if converged is None else bool(converged))

    def assessed(self, fit: Fit) -> tuple[EtsSpec, Fit]:
        """The fit with its model parameters only (without the ``estimator`` record)."""
        return self, Fit({k: v for k, v in fit.params.items() if k != ESTIMATOR_KEY}, fit.raw,
                         fit.converged)

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        model = self.model(y, season_length)
        smoothed = model.smooth(_vector(model, params))
        prediction = smoothed.get_prediction(
            start=len(y), end=len(y) + horizon - 1,
            simulate_repetitions=_SIMULATIONS, rng=np.random.default_rng(seed))
        mean = np.asarray(prediction.predicted_mean, dtype=float)
        lower, upper = {}, {}
        for level in levels:
            frame = prediction.summary_frame(alpha=1 - level / 100)
            lower[level] = frame["pi_lower"].to_numpy(float)
            upper[level] = frame["pi_upper"].to_numpy(float)
        sample = (None if self.gaussian
                  else np.asarray(prediction._results.simulation_results, dtype=float)[-horizon:])
        return Forecast(mean, lower, upper, sample)

    # a family takes only the fit options its class flags declare (see ModelSpec.fit)
    def fit_forecast(self, y: np.ndarray, season_length: int, horizon: int,  # type: ignore[override]
                     levels: tuple[int, ...], seed: int, *, start_params: Params | None = None,
                     estimator: Estimator = "reference", keep_raw: bool = True
                     ) -> tuple[Fit, Forecast]:
        """Estimate on ``y``, then forecast from a smoothing pass at the estimates.

        Without ``keep_raw`` statsmodels returns the estimates alone and does not build its
        results object, whose construction computes the numerical covariance (about a
        third of a fit). Estimates and forecasts are the same either way.
        """
        if estimator == "fast":
            fit = fast_fit(self, y, season_length, start_params, keep_raw)
        elif keep_raw:
            fit = self.fit(y, season_length, start_params=start_params)
        else:
            fit = self._estimates_only(y, season_length, start_params)
        return fit, self.forecast_stretch(y, season_length, fit.params, [len(y)], horizon,
                                          levels, [seed])[0]

    def _estimates_only(self, y: np.ndarray, season_length: int,
                        start_params: Params | None) -> Fit:
        """The reference estimates without statsmodels' results object."""
        model = self.model(y, season_length)
        start = None if start_params is None else _vector(model, start_params)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            vector = model.fit(start_params=start, disp=False, return_params=True)
        for w in caught:  # passed on to the caller, who records them
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        # statsmodels warns exactly when its optimiser reports no convergence
        converged = not any(issubclass(w.category, ConvergenceWarning) for w in caught)
        return Fit(dict(zip(model.param_names, map(float, vector))), None, converged)

    def forecast_stretch(self, y: np.ndarray, season_length: int, params: Params,
                         ends: Sequence[int], horizon: int, levels: tuple[int, ...],
                         seeds: Sequence[int]) -> list[Forecast]:
        """Forecasts from every origin in ``ends`` with one smoothing pass over ``y``."""
        fitted, states = self.smoothing_pass(y, season_length, params)
        return self.forecasts_from_pass(y, season_length, params, fitted, states, ends,
                                        horizon, levels, seeds)

    def smoothing_pass(self, y: np.ndarray, season_length: int, params: Params
                       ) -> tuple[np.ndarray, np.ndarray]:
        """The one-step predictions and the states (level, trend, season) after each
        observation at ``params``, compiled (:func:`~.fast_ets_kernel.smoothing_pass`)."""
        form = EtsClass.of(self, season_length)
        return kernel.smoothing_pass(form.internal(params), np.ascontiguousarray(y, dtype=float),
                                     form.m, form.season == "mul")

    def forecasts_from_pass(self, y: np.ndarray, season_length: int, params: Params,
                            fitted: np.ndarray, states: np.ndarray, ends: Sequence[int],
                            horizon: int, levels: tuple[int, ...], seeds: Sequence[int]
                            ) -> list[Forecast]:
        """Forecasts from every origin in ``ends`` out of a smoothing pass over ``y`` at
        ``params`` (``fitted`` and ``states`` as :meth:`smoothing_pass` gives them)."""
        form = self._form(params, season_length)
        initial = ([params[f"initial_seasonal.{i}"] for i in reversed(range(form.period))]
                   if self.season != "none" else [0.0])
        at = origin_states(form, np.asarray(y, dtype=float), fitted, states, np.array(initial),
                           ends)
        mean = point_forecasts(form, at, horizon)
        if form.linear:
            sd = np.sqrt(at.scale[:, None] * relative_variance(form, horizon))
            return forecasts_by_origin(mean, sd, levels)
        lower, upper, paths = simulated_bounds(form, at, horizon, levels, seeds, _SIMULATIONS)
        return [Forecast(mean[i], {lv: b[i] for lv, b in lower.items()},
                         {lv: b[i] for lv, b in upper.items()}, paths[i])
                for i in range(len(mean))]

    def _form(self, params: Params, season_length: int) -> EtsForm:
        return EtsForm(self.error == "multiplicative", self.season == "multiplicative",
                       self.season_period(season_length) if self.season != "none" else 1,
                       params["smoothing_level"], params.get("smoothing_trend", 0.0),
                       params.get("smoothing_seasonal", 0.0), params.get("damping_trend", 1.0))


def _vector(model: ETSModel, params: Params) -> np.ndarray:
    """``params`` in the order of the statsmodels model's parameters (other entries, such
    as ``estimator``, are left out)."""
    return np.array([params[n] for n in model.param_names], dtype=float)


def parse(body: Mapping[str, Any]) -> EtsSpec:
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
    return EtsSpec(cast(ErrorForm, error), cast(TrendForm, trend), cast(SeasonForm, season),
                   period, transform)
