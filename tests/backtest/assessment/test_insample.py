"""In-sample one-step errors by family."""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from backtest.assessment.insample import (
    arima_burn_in,
    one_step_errors,
    theta_one_step_forecasts,
)
from backtest.models.base import Fit
from backtest.models.benchmarks import BenchmarkSpec
from backtest.models.ets import EtsSpec
from backtest.models.theta import ThetaSpec


def _quiet_fit(spec, y, m):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return spec.fit(y, m)


def test_arima_errors_are_the_kalman_residuals_after_the_burn_in(airline):
    spec, fit, y, _ = airline
    out = one_step_errors(spec, fit, y, 12)
    assert arima_burn_in(spec, 12) == 13 == fit.raw.loglikelihood_burn
    assert out.model_df == 2 and len(out.errors) == 131
    np.testing.assert_array_equal(out.errors, fit.raw.resid[13:])


def test_arima_without_results_object_has_no_errors(airline):
    spec, fit, y, _ = airline
    out = one_step_errors(spec, Fit(fit.params), y, 12)
    assert out.errors is None and "not available" in out.note


@pytest.mark.parametrize(("spec", "log"), [
    (ThetaSpec(), True),
    (ThetaSpec(season="always", decomposition="multiplicative"), False),
    (ThetaSpec(season="always", decomposition="additive"), False),
    (ThetaSpec(season="never"), False),
])
def test_theta_rebuilt_forecast_from_the_last_origin_is_statsmodels_forecast(
        spec, log, series_g):
    y = series_g.iloc[:, 1].to_numpy(float)
    y = np.log(y) if log else y
    fit = _quiet_fit(spec, y, 12)
    forecasts = theta_one_step_forecasts(fit.raw, y)
    assert forecasts[-1] == pytest.approx(float(np.asarray(fit.raw.forecast(1))[0]), rel=1e-12)
    out = one_step_errors(spec, fit, y, 12)
    assert out.model_df == 1
    np.testing.assert_allclose(out.errors, y[1:] - forecasts[:-1])


@pytest.mark.parametrize(("method", "expected"), [
    ("naive", lambda y: np.diff(y)),
    ("seasonal_naive", lambda y: y[4:] - y[:-4]),
    ("drift", lambda y: np.diff(y) - (y[-1] - y[0]) / (len(y) - 1)),
    ("mean", lambda y: y - y.mean()),
])
def test_benchmark_errors_are_closed_form(method, expected):
    # Invented quarterly toy series
    y = np.array([12, 15, 20, 14, 13, 17, 22, 15, 15, 18, 24, 17], dtype=float)
    spec = BenchmarkSpec(method)
    out = one_step_errors(spec, spec.fit(y, 4), y, 4)
    assert out.model_df == 0
    np.testing.assert_allclose(out.errors, expected(y))


@pytest.mark.parametrize(("spec", "model_df"), [
    (EtsSpec(), 1),
    (EtsSpec(trend="additive"), 2),
    (EtsSpec(trend="damped"), 3),
])
def test_ets_model_df_counts_smoothing_and_damping_parameters(spec, model_df, log_air):
    fit = _quiet_fit(spec, log_air[:60], 12)
    out = one_step_errors(spec, fit, log_air[:60], 12)
    assert out.model_df == model_df
    np.testing.assert_array_equal(out.errors, np.asarray(fit.raw.resid))


def test_non_finite_errors_become_a_reason_not_an_exception(airline):
    spec, fit, y, _ = airline
    bad = np.array(y, copy=True)
    bad[5] = np.nan
    naive = BenchmarkSpec("naive")
    out = one_step_errors(naive, naive.fit(y, 12), bad, 12)
    assert out.errors is None and "NaN" in out.note
