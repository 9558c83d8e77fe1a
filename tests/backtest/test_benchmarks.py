"""Benchmark forecasts equal their closed forms on a small written-out series.

Formulas: Hyndman & Athanasopoulos, *Forecasting: Principles and Practice*, 3rd ed. (2021),
section 5.5 (h-step standard deviations; recalled, not checked against the source).
Every expected number below is worked out by hand in the comments.
"""

import numpy as np
import pytest
from scipy import stats

from backtest.models.benchmarks import BenchmarkSpec

Y = np.array([3, 5, 4, 6, 8, 7, 9, 10], float)  # T = 8
Z80 = stats.norm.ppf(0.90)


def _run(method, horizon=5, m=4):
    fit, forecast = BenchmarkSpec(method).fit_forecast(Y, m, horizon, (80,), 0)
    sd = (forecast.upper[80] - forecast.mean) / Z80
    return fit.params, forecast, sd


def test_naive():
    # one-step differences 2,-1,2,2,-1,2,1: sum of squares 19 over 7 residuals
    params, forecast, sd = _run("naive")
    np.testing.assert_allclose(forecast.mean, [10] * 5)
    np.testing.assert_allclose(sd, np.sqrt(19 / 7) * np.sqrt([1, 2, 3, 4, 5]))
    assert params["sigma"] == pytest.approx(np.sqrt(19 / 7))


def test_seasonal_naive():
    # last season 8,7,9,10 repeats; lag-4 differences 5,2,5,4: sum of squares 70 over 4
    _, forecast, sd = _run("seasonal_naive")
    np.testing.assert_allclose(forecast.mean, [8, 7, 9, 10, 8])
    np.testing.assert_allclose(sd, np.sqrt(70 / 4) * np.sqrt([1, 1, 1, 1, 2]))


def test_drift():
    # slope (10 - 3) / 7 = 1; residuals 1,-2,1,1,-2,1,0: sum of squares 12 over T - 2 = 6
    params, forecast, sd = _run("drift", horizon=3)
    np.testing.assert_allclose(forecast.mean, [11, 12, 13])
    h = np.arange(1, 4)
    np.testing.assert_allclose(sd, np.sqrt(2) * np.sqrt(h * (1 + h / 8)))
    assert params["drift"] == pytest.approx(1.0)


def test_mean():
    # mean 6.5; squared deviations sum to 42 over T - 1 = 7
    _, forecast, sd = _run("mean", horizon=2)
    np.testing.assert_allclose(forecast.mean, [6.5, 6.5])
    np.testing.assert_allclose(sd, np.sqrt(6) * np.sqrt(1 + 1 / 8) * np.ones(2))


def test_intervals_are_symmetric_gaussian_at_each_level():
    _, forecast = BenchmarkSpec("naive").fit_forecast(Y, 1, 2, (80, 95), 0)
    ratio = (forecast.upper[95] - forecast.mean) / (forecast.upper[80] - forecast.mean)
    np.testing.assert_allclose(ratio, stats.norm.ppf(0.975) / Z80)
    np.testing.assert_allclose(forecast.mean - forecast.lower[95],
                               forecast.upper[95] - forecast.mean)
