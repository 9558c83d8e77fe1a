"""The benchmark methods on all windows at once equal the one-window formulas.

References: the one-window method (``BenchmarkSpec.fit_forecast``, itself checked against
written-out examples in test_benchmarks.py) applied window by window, and the formulas of
Hyndman & Athanasopoulos (2021, section 5.5) written out below for one window.
"""

import numpy as np
import pytest
from scipy import stats

from backtest.models.base import ModelSpec
from backtest.models.benchmarks import BenchmarkSpec

METHODS = ("naive", "seasonal_naive", "drift", "mean")
HORIZON = 14
LEVELS = (80, 95)
_RNG = np.random.default_rng(20)
SERIES = {
    "random walk": 100 + np.cumsum(_RNG.normal(0.5, 4, 180)),
    "high level": 1e6 + _RNG.normal(0, 1, 180),
    "steep trend": 5 + 3.0 * np.arange(180) + _RNG.normal(0, 0.05, 180),
}
WINDOWS = [(0, end) for end in range(30, 167, 5)] + [(end - 48, end) for end in range(48, 167, 7)]


def _relative_gap(a, b):
    return np.max(np.abs(np.asarray(a) - np.asarray(b)) / np.maximum(np.abs(b), 1e-300))


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize("name", SERIES)
def test_all_windows_equal_window_by_window(method, name):
    spec, y = BenchmarkSpec(method), SERIES[name]
    seeds = [0] * len(WINDOWS)
    together = spec.fit_forecast_windows(y, 12, WINDOWS, HORIZON, LEVELS, seeds)
    one_by_one = ModelSpec.fit_forecast_windows(spec, y, 12, WINDOWS, HORIZON, LEVELS, seeds)
    assert len(together) == len(WINDOWS)
    for (fit, forecast), (ref_fit, ref) in zip(together, one_by_one):
        assert fit.params.keys() == ref_fit.params.keys()
        assert _relative_gap(list(fit.params.values()), list(ref_fit.params.values())) < 1e-9
        assert _relative_gap(forecast.mean, ref.mean) < 1e-12
        for level in LEVELS:
            assert _relative_gap(forecast.lower[level], ref.lower[level]) < 1e-10
            assert _relative_gap(forecast.upper[level], ref.upper[level]) < 1e-10


def test_drift_window_written_out():
    """Drift on y[10:50] of the random walk: b = (y_T - y_1)/(T - 1), residual s.d. with
    T - 2 degrees of freedom, sd_h = s sqrt(h (1 + h/T)) (FPP3 section 5.5)."""
    y = SERIES["random walk"]
    window = y[10:50]
    slope = (window[-1] - window[0]) / 39
    s = np.sqrt(np.sum((np.diff(window) - slope) ** 2) / 38)
    h = np.arange(1, HORIZON + 1)
    z = stats.norm.ppf(0.975)
    ((fit, forecast),) = BenchmarkSpec("drift").fit_forecast_windows(
        y, 12, [(10, 50)], HORIZON, (95,), [0])
    np.testing.assert_allclose(fit.params["drift"], slope, rtol=1e-12)
    np.testing.assert_allclose(forecast.upper[95], window[-1] + h * slope
                               + z * s * np.sqrt(h * (1 + h / 40)), rtol=1e-12)


def test_later_data_never_enter_a_window():
    y = SERIES["random walk"].copy()
    seeds = [0] * len(WINDOWS)
    before = BenchmarkSpec("mean").fit_forecast_windows(y, 12, WINDOWS, 3, LEVELS, seeds)
    y[100:] += 1e4
    after = BenchmarkSpec("mean").fit_forecast_windows(y, 12, WINDOWS, 3, LEVELS, seeds)
    checked = 0
    for (_, end), (_, a), (_, b) in zip(WINDOWS, before, after):
        if end <= 100:
            checked += 1
            assert np.array_equal(a.mean, b.mean) and np.array_equal(a.upper[95], b.upper[95])
    assert checked > 10
