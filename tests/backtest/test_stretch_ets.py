"""ETS forecasts from one smoothing pass equal statsmodels' own per-origin predictions.

The reference is statsmodels' ETSModel on ``y[:t]`` with the same parameters:
``smooth(params).get_prediction(...)``, with its analytic intervals for the linear classes
and 1000 simulated paths from ``default_rng(seed)`` for the others. Tolerance 1e-8.
"""

import warnings

import numpy as np
import pytest
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

from backtest.models.ets import EtsSpec
from tests.backtest.ets_classes import SPECS, statsmodels_model

TOLERANCE = 1e-8
HORIZON = 12
LEVELS = (80, 95)


def _statsmodels_prediction(spec, y, params, seed):
    model = statsmodels_model(spec, y, 12)
    smoothed = model.smooth([params[n] for n in model.param_names])
    return smoothed.get_prediction(start=len(y), end=len(y) + HORIZON - 1,
                                   simulate_repetitions=1000, rng=np.random.default_rng(seed))


def _assert_same(ours, prediction):
    np.testing.assert_allclose(ours.mean, prediction.predicted_mean, rtol=0, atol=TOLERANCE)
    for level in LEVELS:
        frame = prediction.summary_frame(alpha=1 - level / 100)
        np.testing.assert_allclose(ours.lower[level], frame["pi_lower"], rtol=0, atol=TOLERANCE)
        np.testing.assert_allclose(ours.upper[level], frame["pi_upper"], rtol=0, atol=TOLERANCE)


def _estimate(spec, y):
    """Parameters of a plain fit; a convergence warning does not matter here."""
    with warnings.catch_warnings(record=True):
        warnings.simplefilter("always")
        return spec.fit(y, 12).params


@pytest.fixture(scope="module")
def passengers(series_g):
    return series_g.iloc[:, 1].to_numpy(float)


@pytest.mark.parametrize("spec", SPECS, ids=lambda s: s.label(12))
def test_stretch_equals_statsmodels_per_origin(spec, passengers):
    params = _estimate(spec, passengers[:72])
    ends, seeds = [30, 31, 100, 144], [7, 8, 9, 10]
    stretch = spec.forecast_stretch(passengers, 12, params, ends, HORIZON, LEVELS, seeds)
    for end, seed, ours in zip(ends, seeds, stretch):
        _assert_same(ours, _statsmodels_prediction(spec, passengers[:end], params, seed))


@pytest.mark.parametrize("spec", [SPECS[4], SPECS[14]], ids=lambda s: s.label(12))
def test_estimation_equals_a_plain_statsmodels_fit(spec, passengers):
    y = passengers[:96]
    fit, forecast = spec.fit_forecast(y, 12, HORIZON, LEVELS, 3)
    hand = statsmodels_model(spec, y, 12).fit(disp=False)
    np.testing.assert_array_equal(list(fit.params.values()), hand.params)
    prediction = hand.get_prediction(start=96, end=96 + HORIZON - 1,
                                     simulate_repetitions=1000, rng=np.random.default_rng(3))
    _assert_same(forecast, prediction)


def test_scale_is_rebuilt_per_origin(passengers):
    """The scale is concentrated out of the likelihood (the mean squared one-step error of
    the data seen), so each origin needs its own: on these heteroscedastic data the full
    series' scale is about 11 times the one at origin 40."""
    spec = EtsSpec("additive", "additive", "additive")
    params = _estimate(spec, passengers[:72])
    (ours, last) = spec.forecast_stretch(passengers, 12, params, [40, 144], HORIZON, LEVELS,
                                         [0, 0])
    reference = _statsmodels_prediction(spec, passengers[:40], params, 0)
    _assert_same(ours, reference)
    full_series_sd = np.sqrt(_statsmodels_prediction(spec, passengers, params, 0).var_pred_mean)
    origin_sd = np.sqrt(reference.var_pred_mean)
    ratio = full_series_sd[0] / origin_sd[0]
    assert ratio > 3
    _assert_same(last, _statsmodels_prediction(spec, passengers, params, 0))


def test_plain_arrays_are_given_the_index_prediction_needs(passengers):
    """statsmodels' ETS prediction fails on an endog without a pandas index; the spec's
    forecasts work on plain arrays and give the indexed reference."""
    spec = EtsSpec("additive", "damped", "none")
    y = np.asarray(passengers[:60])
    params = _estimate(spec, y)
    bare = ETSModel(y, error="add", trend="add", damped_trend=True)
    with pytest.raises(AttributeError):
        bare.smooth([params[n] for n in bare.param_names]).get_prediction(start=60, end=65)
    (ours,) = spec.forecast_stretch(y, 12, params, [60], HORIZON, LEVELS, [0])
    _assert_same(ours, _statsmodels_prediction(spec, y, params, 0))
