"""ARIMA and seasonal ARIMA with an optional constant or drift (statsmodels state space).

Estimation is exact Gaussian maximum likelihood with a diffuse initialisation of the
nonstationary part (statsmodels ``ARIMA(...).fit()`` defaults: stationarity and
invertibility enforced). Forecasts with given parameters come from the Kalman filter over
the training window, so a kept parameter set still conditions on every observation up to
the origin.

Data whose differenced spread is extreme (log data of a smooth series: innovation variance
near 1e-6) are multiplied by a power of two before estimation (:meth:`ArimaSpec.rescaling`);
the estimate is mapped back exactly (constant and drift divided by the factor, the variance
by its square) and the results, likelihood and forecasts are computed on the original data.
A fit otherwise follows statsmodels' optimiser path exactly but keeps only the filter
output (no smoother, no default covariance): the estimates are the same, the results still give
residuals, likelihood and, on request, covariances (``cov_params_approx``, ...). Forecasts,
from the estimation origin or from a stretch of later origins with fixed parameters, come
from one filter pass (:mod:`.kalman_stretch`) of the compiled copy of statsmodels' filter
(:mod:`.compiled_filter`) at the statsmodels model's matrices (filled in from the
parameters by :mod:`.arima_system`).

``estimator="fast"`` estimates with the compiled estimator instead (:mod:`.fast_arima`,
same likelihood); forecasts and results still come from the statsmodels model at those
estimates. The parameters then carry ``estimator`` (1 fast, 0 the fast estimator failed
and the reference estimated the fold, with a :class:`~.fast_fallback.EstimatorFallback`
warning giving the reason).
"""

from __future__ import annotations

import functools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, Literal, cast

import numpy as np
from statsmodels.tsa.arima.model import ARIMA
from statsmodels.tsa.statespace.kalman_filter import MEMORY_NO_SMOOTHING

from backtest.errors import CandidateError
from backtest.labels import arima_label
from backtest.models.arima_system import ArimaLayout
from backtest.models.base import (
    Estimator,
    Fit,
    Forecast,
    ModelSpec,
    Params,
    choice,
    normal_bounds,
    optional_period,
    small_int,
    take_fields,
)
from backtest.models.compiled_filter import predicted_states
from backtest.models.fast_arima import fast_fit
from backtest.models.fast_fallback import ESTIMATOR_KEY
from backtest.models.kalman_stretch import (
    LinearSystem,
    OriginStates,
    propagate,
    states_at,
)
from backtest.models.origin_bounds import forecasts_by_origin
from backtest.transforms import Transform, parse_transform

Deterministic = Literal["none", "constant", "drift"]
_TREND = {"none": "n", "constant": "c", "drift": "t"}
RENAMED_PARAMETERS = {"const": "constant", "x1": "drift"}


@dataclass(frozen=True)
class ArimaSpec(ModelSpec):
    """ARIMA(p,d,q)×(P,D,Q) with a seasonal period, a deterministic term and a transform."""

    family: ClassVar[str] = "arima"
    warm_startable: ClassVar[bool] = True
    fast_estimable: ClassVar[bool] = True
    raw_optional: ClassVar[bool] = True
    order: tuple[int, int, int] = (0, 1, 1)
    seasonal: tuple[int, int, int] | None = None
    period: int | None = None
    deterministic: Deterministic = "none"
    transform: Transform = Transform()

    def body(self) -> dict[str, Any]:
        seasonal = None if self.seasonal is None else {
            "order": list(self.seasonal), "period": self.period}
        return {"order": list(self.order), "seasonal": seasonal,
                "deterministic": self.deterministic, "transform": self.transform.canonical()}

    def label(self, season_length: int) -> str:
        return arima_label(self.order, self.seasonal, self.season_period(season_length),
                           self.deterministic, self.transform)

    def season_period(self, season_length: int) -> int:
        """The seasonal period in use: the spec's own, else the series' season length."""
        return self.period or season_length

    def check(self, season_length: int) -> None:
        if self.seasonal is not None and self.season_period(season_length) < 2:
            raise CandidateError(f"{self.label(season_length)}: a seasonal part needs a period "
                                 "of at least 2, and the series has season length 1")

    def min_train(self, season_length: int) -> int:
        p, d, q = self.order
        big_p, big_d, big_q = self.seasonal or (0, 0, 0)
        s = self.season_period(season_length) if self.seasonal else 0
        n_params = p + q + big_p + big_q + (self.deterministic != "none") + 1
        return d + big_d * s + max(p + big_p * s, q + big_q * s) + n_params + 2

    def model(self, y: np.ndarray, season_length: int) -> ARIMA:
        """The statsmodels model for training window ``y``."""
        seasonal = (0, 0, 0, 0)
        if self.seasonal is not None:
            seasonal = (*self.seasonal, self.season_period(season_length))
        return ARIMA(y, order=self.order, seasonal_order=seasonal,
                     trend=_TREND[self.deterministic])

    def fit(self, y: np.ndarray, season_length: int, *,
            start_params: Params | None = None, estimator: Estimator = "reference",
            keep_raw: bool = True) -> Fit:
        """Estimate on ``y``; ``start_params`` (e.g. a previous estimate) seeds the optimiser
        instead of the default start values. ``keep_raw=False`` lets the fast estimator
        skip building statsmodels' results object."""
        if estimator == "fast":
            return fast_fit(self, y, season_length, start_params, keep_raw)
        return self.reference_fit(y, season_length, start_params=start_params)

    def reference_fit(self, y: np.ndarray, season_length: int, *,
                      start_params: Params | None = None) -> Fit:
        """statsmodels' own estimation (the reference estimator)."""
        model = self.model(y, season_length)
        # With smoothing output switched off statsmodels' fit filters instead of smoothing;
        # the optimiser path, and so every estimate, is unchanged.
        model.ssm.set_conserve_memory(MEMORY_NO_SMOOTHING)
        start = None if start_params is None else vector(model, start_params)
        factor = self.rescaling(y, season_length)
        if factor == 1.0:
            fitted = model.fit(start_params=start, cov_type="none")
        else:
            scaled = self.model(np.asarray(y, dtype=float) * factor, season_length)
            scaled.ssm.set_conserve_memory(MEMORY_NO_SMOOTHING)
            powers = _scale_powers(model)
            estimate = scaled.fit(start_params=None if start is None else start * factor**powers,
                                  cov_type="none")
            fitted = self.unscaled(estimate, y, season_length, factor)
        names = [RENAMED_PARAMETERS.get(n, n) for n in model.param_names]
        converged = (fitted.mle_retvals or {}).get("converged")
        return Fit(dict(zip(names, map(float, fitted.params))), fitted,
                   None if converged is None else bool(converged), factor)

    def rescaling(self, y: np.ndarray, season_length: int) -> float:
        """The power of two the data are multiplied by before estimation: 1 unless the
        standard deviation of the differenced data lies outside [1e-2, 1e3], then the power
        of two that brings it nearest 1. With an innovation variance near 1e-6 (log data
        of a smooth series) statsmodels' optimiser stops short of the maximum; a power of
        two changes no digit of the data, and the estimate is mapped back exactly."""
        x = np.diff(np.asarray(y, dtype=float), n=self.order[1])
        if self.seasonal is not None:
            period = self.season_period(season_length)
            for _ in range(self.seasonal[1]):
                x = x[period:] - x[:-period]
        spread = float(np.std(x)) if len(x) > 1 else 0.0
        if not np.isfinite(spread) or spread == 0.0 or 1e-2 <= spread <= 1e3:
            return 1.0
        return 2.0 ** -round(float(np.log2(spread)))

    def unscaled(self, estimate: Any, y: np.ndarray, season_length: int, factor: float) -> Any:
        """statsmodels' results on the original data ``y`` at an estimate made on
        ``factor * y``, mapped back: likelihood, residuals, covariances and forecasts are
        those of the unscaled model; the optimiser's report is the estimate's."""
        model = self.model(y, season_length)
        fitted = model.filter(estimate.params / factor**_scale_powers(model), cov_type="none")
        fitted.mle_retvals, fitted.mle_settings = estimate.mle_retvals, estimate.mle_settings
        return fitted

    def assessed(self, fit: Fit) -> tuple[ArimaSpec, Fit]:
        """The fit with its model parameters only (without the ``estimator`` record)."""
        return self, Fit({k: v for k, v in fit.params.items() if k != ESTIMATOR_KEY}, fit.raw,
                         fit.converged)

    def results_at(self, y: np.ndarray, season_length: int, params: Params) -> Any:
        """statsmodels' results of a filter pass over ``y`` at ``params`` (no estimation)."""
        model = self.model(y, season_length)
        return model.filter(vector(model, params))

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        model = self.model(y, season_length)
        prediction = model.filter(vector(model, params)).get_forecast(horizon)
        mean = np.asarray(prediction.predicted_mean, dtype=float)
        sd = np.sqrt(np.asarray(prediction.var_pred_mean, dtype=float))
        return normal_bounds(mean, sd, levels)

    # a family takes only the fit options its class flags declare (see ModelSpec.fit)
    def fit_forecast(self, y: np.ndarray, season_length: int, horizon: int,  # type: ignore[override]
                     levels: tuple[int, ...], seed: int, *,
                     start_params: Params | None = None, estimator: Estimator = "reference",
                     keep_raw: bool = True) -> tuple[Fit, Forecast]:
        """Estimate on ``y``, then forecast by :meth:`forecast_stretch` at the estimates,
        whether or not the fit keeps statsmodels' results (so the lean and the full
        assessment give the same forecasts to the last digit)."""
        fit = self.fit(y, season_length, start_params=start_params, estimator=estimator,
                       keep_raw=keep_raw)
        return fit, self.forecast_stretch(y, season_length, fit.params, [len(y)], horizon,
                                          levels, [seed])[0]

    def forecast_stretch(self, y: np.ndarray, season_length: int, params: Params,
                         ends: Sequence[int], horizon: int, levels: tuple[int, ...],
                         seeds: Sequence[int]) -> list[Forecast]:
        """Forecasts from every origin in ``ends`` with one Kalman filter pass over ``y``:
        statsmodels' filter (:mod:`.compiled_filter`) with the statsmodels model's
        matrices and initialisation at ``params``, filled in from the parameters
        (:mod:`.arima_system`), so that no model is built on ``y``. Data of extreme scale
        (:meth:`rescaling` not 1) are filtered by statsmodels itself: there the 1e6 start
        variance of the differencing states dwarfs the data's, the covariances carry
        rounding noise of the data's own size, and only statsmodels' arithmetic gives
        statsmodels' forecasts."""
        y = np.asarray(y, dtype=float)
        at = np.asarray(ends, dtype=np.int64)
        if self.rescaling(y, season_length) != 1.0:
            model = self.model(y, season_length)
            model.update(vector(model, params), transformed=True)
            system = LinearSystem.of(model)
            states = states_at(model.ssm.filter(), ends)
        else:
            system, initial_mean, initial_cov = _system_at(self, season_length, params)
            order = np.argsort(at, kind="stable")
            means, covs = predicted_states(y, self._intercepts(params, np.arange(len(y))),
                                           system.design, system.obs_var, system.transition,
                                           system.state_intercept, system.disturbance_cov,
                                           initial_mean, initial_cov, at[order])
            states = OriginStates(np.empty_like(means), np.empty_like(covs))
            states.mean[order], states.cov[order] = means, covs
        times = at[:, None] + np.arange(horizon)
        mean, var = propagate(system, states, self._intercepts(params, times))
        return forecasts_by_origin(mean, np.sqrt(var), levels)

    def _intercepts(self, params: Params, times: np.ndarray) -> np.ndarray:
        """The deterministic term at 0-based ``times``; statsmodels' drift regressor is
        ``t + 1`` (its default trend offset)."""
        if self.deterministic == "constant":
            return np.full(times.shape, params["constant"])
        if self.deterministic == "drift":
            return params["drift"] * (times + 1.0)
        return np.zeros(times.shape)


@functools.lru_cache(maxsize=64)
def _layout(spec: ArimaSpec, season_length: int) -> ArimaLayout:
    """The parameter-free part of the statsmodels model of ``spec``, read from a model on
    zeros (its matrices do not depend on the data)."""
    return ArimaLayout.of(spec.model(np.zeros(spec.min_train(season_length)), season_length))


def _system_at(spec: ArimaSpec, season_length: int, params: Params
               ) -> tuple[LinearSystem, np.ndarray, np.ndarray]:
    """The statsmodels model's matrices at ``params`` and its initial state mean and
    covariance (the differencing states approximately diffuse, the ARMA states at their
    stationary covariance), filled in from the parameters (:mod:`.arima_system`)."""
    return _layout(spec, season_length).system_at(params)


def _scale_powers(model: ARIMA) -> np.ndarray:
    """Per parameter, the power of the data's scale it carries: 1 for the constant and the
    drift, 2 for the innovation variance, 0 for AR and MA coefficients."""
    return np.array([2.0 if n == "sigma2" else 1.0 if n in RENAMED_PARAMETERS else 0.0
                     for n in model.param_names])


def vector(model: ARIMA, params: Params) -> np.ndarray:
    """``params`` in the order of the statsmodels model's parameters (other entries, such
    as ``estimator``, are left out)."""
    return np.array([params[RENAMED_PARAMETERS.get(n, n)] for n in model.param_names], dtype=float)


def parse(body: Mapping[str, Any]) -> ArimaSpec:
    """Read an ``arima`` candidate body; reject impossible deterministic terms."""
    fields = take_fields(body, "arima", {"order", "seasonal", "deterministic", "transform"})
    order = _order(fields.get("order"), "arima order", (5, 2, 5))
    seasonal, period = None, None
    if fields.get("seasonal") is not None:
        part = fields["seasonal"]
        if not isinstance(part, Mapping) or not set(part) <= {"order", "period"}:
            raise CandidateError('arima seasonal must be {"order": [P, D, Q], "period": m}')
        seasonal = _order(part.get("order"), "arima seasonal order", (2, 1, 2))
        period = optional_period(part.get("period"), "arima seasonal period")
    det = choice(fields.get("deterministic", "none"), tuple(_TREND), "arima deterministic")
    integration = order[1] + (seasonal[1] if seasonal else 0)
    if det == "constant" and integration != 0:
        raise CandidateError(f"arima: a constant needs d + D = 0 (here {integration}); with "
                             "d + D = 1 use \"drift\", with more differencing use \"none\"")
    if det == "drift" and integration != 1:
        raise CandidateError(f"arima: drift needs d + D = 1 (here {integration}); with "
                             "d + D = 0 use \"constant\", with more differencing use \"none\"")
    transform = parse_transform(fields.get("transform"))
    return ArimaSpec(order, seasonal, period, cast(Deterministic, det), transform)


def _order(value: object, what: str, highs: tuple[int, int, int]) -> tuple[int, int, int]:
    if not isinstance(value, list | tuple) or len(value) != 3:
        raise CandidateError(f"{what} must be a list of three integers, got {value!r}")
    names = ("first", "second", "third")
    first, second, third = (small_int(v, f"{what} {names[i]} entry", highs[i])
                            for i, v in enumerate(value))
    return first, second, third
