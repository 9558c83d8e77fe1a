"""Readable parameter names for tables, library names for machine-readable output."""

import warnings

import numpy as np
import pytest

from backtest.candidates import parse_candidate
from backtest.parameter_names import readable


@pytest.mark.parametrize(("name", "shown"), [
    ("ma.L1", "MA 1"), ("ar.L2", "AR 2"), ("ma.S.L12", "seasonal MA 1"),
    ("ar.S.L24", "seasonal AR 2"), ("sigma2", "innovation variance"),
    ("smoothing_level", "level smoothing"), ("damping_trend", "trend damping"),
    ("initial_seasonal.0", "starting season 1"), ("order.Q", "seasonal MA order Q"),
    ("search.fitted", "orders fitted"), ("something_new", "something_new"),
])
def test_library_names_read_as_words(name, shown):
    assert readable(name, period=12) == shown


def test_a_seasonal_lag_without_its_period_names_the_lag():
    assert readable("ma.S.L12") == "seasonal MA, lag 12"


@pytest.mark.parametrize("body", [
    {"family": "arima", "order": [1, 1, 1], "seasonal": {"order": [1, 1, 1]},
     "deterministic": "none"},
    {"family": "ets", "error": "additive", "trend": "damped", "season": "additive"},
    {"family": "theta"}, {"family": "benchmark", "method": "drift"},
])
def test_every_fitted_parameter_of_a_family_gets_a_readable_name(body):
    """Fitted with the wrapped library (statsmodels): none of its names shows through, and
    no two names coincide."""
    rng = np.random.default_rng(0)
    y = 100 + np.arange(72) + 10 * np.sin(np.arange(72) * np.pi / 6) + rng.normal(0, 1, 72)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # estimation warnings are not what is checked here
        params = parse_candidate(body).spec.fit(y, 12).params
    shown = [readable(name, 12) for name in params]
    assert all(shown_name != name or name in ("constant",)
               for name, shown_name in zip(params, shown)), dict(zip(params, shown))
    assert len(set(shown)) == len(shown)
