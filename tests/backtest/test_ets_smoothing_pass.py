"""The compiled ETS smoothing pass is statsmodels' ``ETSModel.smooth``, and the forecasts
built from it are those built from statsmodels' pass.

External check: statsmodels 0.15.0, ``ETSModel(...).smooth(params, return_raw=True)``
(computed with statsmodels 0.15.0 in the test), for all 18 classes of the ``ets`` family,
on invented deterministic data at parameters away from statsmodels' start values.
"""


import numpy as np
import pandas as pd
import pytest

from backtest.models.ets import EtsSpec
from tests.backtest.ets_classes import SPECS, statsmodels_model

PASS_TOLERANCE = 1e-10
FORECAST_TOLERANCE = 1e-9
PERIOD = 12
HORIZON = 12
LEVELS = (80, 95)


def _invented_series(n: int = 120) -> np.ndarray:
    """Positive, trending, seasonal, with an irregular part (invented, deterministic)."""
    t = np.arange(n, dtype=float)
    return (200.0 + 1.5 * t + 25.0 * np.sin(2 * np.pi * t / PERIOD)
            + 8.0 * np.cos(1.3 * t) + 5.0 * np.sin(0.37 * t**1.1))


def _params(spec: EtsSpec) -> dict[str, float]:
    """Non-trivial parameters under statsmodels' names (alpha 0.35, beta 0.06, gamma 0.12,
    phi 0.9, distinct initial seasonal states)."""
    params = {"smoothing_level": 0.35, "initial_level": 195.0}
    if spec.trend != "none":
        params |= {"smoothing_trend": 0.06, "initial_trend": 1.2}
    if spec.trend == "damped":
        params["damping_trend"] = 0.9
    if spec.season != "none":
        params["smoothing_seasonal"] = 0.12
        shape = np.sin(2 * np.pi * (np.arange(PERIOD) + 0.5) / PERIOD)
        seasons = 1 + 0.1 * shape if spec.season == "multiplicative" else 20.0 * shape
        params |= {f"initial_seasonal.{j}": float(v) for j, v in enumerate(seasons)}
    return params


def _statsmodels_pass(spec: EtsSpec, y: np.ndarray, params: dict[str, float]
                      ) -> tuple[np.ndarray, pd.DataFrame]:
    model = statsmodels_model(spec, y, PERIOD)
    fitted, states = model.smooth(np.array([params[n] for n in model.param_names]),
                                  return_raw=True)
    return fitted.to_numpy(float), states


def _as_layout(states: pd.DataFrame) -> np.ndarray:
    """statsmodels' states as columns level, trend, season (0 for a missing component)."""
    return np.column_stack([states[c].to_numpy(float) if c in states else np.zeros(len(states))
                            for c in ("level", "trend", "seasonal")])


def _assert_forecasts_equal(ours, reference) -> None:
    np.testing.assert_allclose(ours.mean, reference.mean, rtol=FORECAST_TOLERANCE, atol=0)
    for level in LEVELS:
        np.testing.assert_allclose(ours.lower[level], reference.lower[level],
                                   rtol=FORECAST_TOLERANCE, atol=0)
        np.testing.assert_allclose(ours.upper[level], reference.upper[level],
                                   rtol=FORECAST_TOLERANCE, atol=0)


@pytest.mark.parametrize("spec", SPECS, ids=lambda s: s.label(PERIOD))
def test_pass_equals_statsmodels_smooth(spec):
    y = _invented_series()
    params = _params(spec)
    fitted, states = spec.smoothing_pass(y, PERIOD, params)
    reference_fitted, reference_states = _statsmodels_pass(spec, y, params)
    np.testing.assert_allclose(fitted, reference_fitted, rtol=PASS_TOLERANCE, atol=0)
    for column, name in enumerate(("level", "trend", "seasonal")):
        if name in reference_states:
            np.testing.assert_allclose(states[:, column], reference_states[name],
                                       rtol=PASS_TOLERANCE, atol=0)
        else:
            assert np.all(states[:, column] == 0.0), name
    # the parameters matter: a changed smoothing level changes the pass
    moved, _ = spec.smoothing_pass(y, PERIOD, {**params, "smoothing_level": 0.5})
    assert np.max(np.abs(moved - fitted)) > 1e-3


@pytest.mark.parametrize("spec", SPECS, ids=lambda s: s.label(PERIOD))
def test_stretch_forecasts_equal_those_from_statsmodels_pass(spec):
    y = _invented_series()
    params = _params(spec)
    ends, seeds = [30, 77, 120], [4, 5, 6]
    ours = spec.forecast_stretch(y, PERIOD, params, ends, HORIZON, LEVELS, seeds)
    fitted, states = _statsmodels_pass(spec, y, params)
    reference = spec.forecasts_from_pass(y, PERIOD, params, fitted, _as_layout(states), ends,
                                         HORIZON, LEVELS, seeds)
    for a, b in zip(ours, reference, strict=True):
        _assert_forecasts_equal(a, b)


@pytest.mark.parametrize("code", [("additive", "additive", "additive"),
                                  ("additive", "damped", "none"),
                                  ("multiplicative", "damped", "multiplicative")])
def test_fast_fit_forecast_equals_the_forecast_from_statsmodels_pass(code):
    spec = EtsSpec(*code)
    y = _invented_series(96)
    fit, forecast = spec.fit_forecast(y, PERIOD, HORIZON, LEVELS, 11, estimator="fast",
                                      keep_raw=False)
    assert fit.params["estimator"] == 1.0 and fit.raw is None
    fitted, states = _statsmodels_pass(spec, y, fit.params)
    (reference,) = spec.forecasts_from_pass(y, PERIOD, fit.params, fitted, _as_layout(states),
                                            [len(y)], HORIZON, LEVELS, [11])
    _assert_forecasts_equal(forecast, reference)
