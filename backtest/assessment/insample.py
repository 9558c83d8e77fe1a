"""In-sample one-step errors of a fitted model, by family, for the residual tests.

Each function returns an :class:`InSample`: the errors, how many ARMA-type coefficients
were estimated (the ``model_df`` the Ljung-Box degrees of freedom subtract), and a note
saying what the errors are. All errors are on the model's (transformed) scale.

- ARIMA: the Kalman-filter one-step residuals after the d + D*m observations that the
  diffuse initialisation spends (``resid[13:]`` for the airline model); model_df is
  p + q + P + Q.
- ETS: statsmodels' innovations ``resid`` (relative errors for a multiplicative error);
  model_df is the number of estimated smoothing and damping parameters, the ones that
  shape the innovations' autocorrelation (ETS(A,N,N) is ARIMA(0,1,1), model_df 1).
  Initial states are not counted: they do not use up autocorrelation degrees of freedom.
- Theta: errors of the theta forecast from each origin t = 1..n-1 with the full-sample
  parameters (b0, alpha, seasonal indices), rebuilt from the forecast formula; model_df 1,
  theta being simple exponential smoothing with drift, an ARIMA(0,1,1) (Hyndman & Billah
  2003).
- Benchmarks: closed-form one-step errors (naive: first differences; seasonal naive:
  lag-m differences; drift: differences minus the slope; mean: deviations from the
  mean); model_df 0.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from backtest.models.arima import ArimaSpec
from backtest.models.base import Fit, ModelSpec
from backtest.models.benchmarks import BenchmarkSpec
from backtest.models.ets import EtsSpec
from backtest.models.theta import ThetaSpec

ETS_DYNAMICS = ("smoothing_level", "smoothing_trend", "smoothing_seasonal", "damping_trend")


@dataclass(frozen=True)
class InSample:
    """One-step in-sample errors, the ARMA-type coefficient count, and what they are."""

    errors: np.ndarray | None
    model_df: int
    note: str


def one_step_errors(spec: ModelSpec, fit: Fit, y: np.ndarray, season_length: int) -> InSample:
    """In-sample one-step errors of ``fit`` (estimated on ``y``) for any family."""
    # each family's function takes that family's spec (chosen by the spec's family name)
    family: dict[str, Callable[[Any, Fit, np.ndarray, int], InSample]] = {
        "arima": _arima, "ets": _ets, "theta": _theta, "benchmark": _benchmark}
    if spec.family not in family:
        return InSample(None, 0, f"no in-sample errors for family {spec.family!r}")
    needs_raw = spec.family in ("arima", "ets", "theta")
    if needs_raw and fit.raw is None:
        return InSample(None, 0, "the fitted-results object is not available")
    out = family[spec.family](spec, fit, np.asarray(y, dtype=float), season_length)
    if out.errors is None or not np.all(np.isfinite(out.errors)):
        return InSample(None, out.model_df, f"{out.note}: contain NaN or infinite values")
    return out


def arima_burn_in(spec: ArimaSpec, season_length: int) -> int:
    """d + D*m: observations the diffuse initialisation of the differences spends."""
    big_d = spec.seasonal[1] if spec.seasonal else 0
    return spec.order[1] + big_d * spec.season_period(season_length)


def arima_model_df(spec: ArimaSpec) -> int:
    """p + q + P + Q."""
    p, _, q = spec.order
    big_p, _, big_q = spec.seasonal or (0, 0, 0)
    return p + q + big_p + big_q


def _arima(spec: ArimaSpec, fit: Fit, y: np.ndarray, season_length: int) -> InSample:
    burn = arima_burn_in(spec, season_length)
    errors = np.asarray(fit.raw.resid, dtype=float)[burn:]
    return InSample(errors, arima_model_df(spec),
                    f"Kalman one-step residuals after a burn-in of d + D*m = {burn}")


def _ets(spec: EtsSpec, fit: Fit, y: np.ndarray, season_length: int) -> InSample:
    fixed = set(getattr(fit.raw, "fixed_params", None) or ())
    model_df = len([name for name in fit.raw.model.param_names
                    if name in ETS_DYNAMICS and name not in fixed])
    kind = "relative" if spec.error == "multiplicative" else "additive"
    return InSample(np.asarray(fit.raw.resid, dtype=float), model_df,
                    f"ETS innovations ({kind} errors)")


def _theta(spec: ThetaSpec, fit: Fit, y: np.ndarray, season_length: int) -> InSample:
    forecasts = theta_one_step_forecasts(fit.raw, y)
    return InSample(y[1:] - forecasts[:-1], 1,
                    "theta one-step errors from origins 1..n-1 with full-sample parameters")


def theta_one_step_forecasts(fitted: Any, y: np.ndarray) -> np.ndarray:
    """Theta (theta = 2) forecasts of y_1..y_n, the last one out of sample.

    Rebuilds statsmodels' formula (``ThetaModelResults.forecast``) from origin t with
    t observations: ``b0/2 * (1/alpha - (1-alpha)^t / alpha) + l_{t-1}``, where ``l`` is
    simple exponential smoothing of the deseasonalised data started at its first value,
    then reseasonalised with the seasonal index of period t.
    """
    b0, alpha = (float(v) for v in np.asarray(fitted.params))
    n = len(y)
    multiplicative = fitted.model.method.startswith("mul")
    period = fitted.model.period
    season = np.asarray(fitted.forecast_components(period)["seasonal"], dtype=float)
    index = season[(np.arange(n + 1) - n) % period]
    plain = y / index[:n] if multiplicative else y - index[:n]
    level = np.empty(n)
    level[0] = plain[0]
    for t in range(1, n):
        level[t] = alpha * plain[t] + (1.0 - alpha) * level[t - 1]
    steps = np.arange(1, n + 1)
    trend = (1.0 - (1.0 - alpha) ** steps) / alpha if alpha > 0 else np.zeros(n)
    forecast = 0.5 * b0 * trend + level
    result: np.ndarray = forecast * index[1:] if multiplicative else forecast + index[1:]
    return result


def _benchmark(spec: BenchmarkSpec, fit: Fit, y: np.ndarray, season_length: int) -> InSample:
    if spec.method == "naive":
        return InSample(np.diff(y), 0, "naive one-step errors (first differences)")
    if spec.method == "seasonal_naive":
        m = season_length
        return InSample(y[m:] - y[:-m], 0, f"seasonal naive one-step errors (lag-{m} differences)")
    if spec.method == "drift":
        slope = (y[-1] - y[0]) / (len(y) - 1)
        return InSample(np.diff(y) - slope, 0, "drift one-step errors (differences minus slope)")
    return InSample(y - y.mean(), 0, "mean-method errors (deviations from the mean)")
