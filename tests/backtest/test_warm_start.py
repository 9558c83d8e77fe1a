"""The plan's warm start: off by default, recorded with the run, and exactly statsmodels'
fit started from the previous estimation's values when on."""

import numpy as np
import pandas as pd
import pytest
from statsmodels.tsa.arima.model import ARIMA
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

from backtest.candidates import parse_candidate, parse_candidates
from backtest.engine import run_backtest
from backtest.errors import PlanError
from backtest.folds import plan_origins
from backtest.plan import parse_plan
from backtest.runner import run_candidate
from backtest.series import make_series


@pytest.fixture(scope="module")
def airline(series_g):
    values = series_g.iloc[:, 1].to_numpy(float)
    return make_series("g", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                    for i, v in enumerate(values)])


def _folds(series, spec, warm):
    plan = parse_plan({"horizon": 3, "max_origins": 4, "refit": 2, "warm_start": warm,
                       "estimator": "reference"})
    return run_candidate(series, parse_candidate(spec), plan, plan_origins(series, plan, 40))


def test_off_by_default_and_recorded():
    assert parse_plan({"horizon": 2}).canonical()["warm_start"] is False
    assert parse_plan({"horizon": 2, "warm_start": True}).canonical()["warm_start"] is True
    with pytest.raises(PlanError, match="warm_start must be true or false"):
        parse_plan({"horizon": 2, "warm_start": "yes"})


def test_arima_restarts_from_the_previous_estimate(airline):
    spec = {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
            "transform": "log"}
    folds = _folds(airline, spec, True)
    y = np.log(np.asarray(airline.values, dtype=float))
    first, second = folds[0], folds[2]
    assert second.reestimated and second.train_size == first.train_size + 2

    def model(end):
        return ARIMA(y[:end], order=(0, 1, 1), seasonal_order=(0, 1, 1, 12))

    cold = model(first.train_size).fit().params
    previous = [first.params[k] for k in ("ma.L1", "ma.S.L12", "sigma2")]
    warm = model(second.train_size).fit(start_params=previous).params
    assert list(first.params.values()) == list(cold)
    assert list(second.params.values()) == list(warm)
    assert _folds(airline, spec, False)[0].params == first.params


def test_ets_restarts_from_the_previous_estimate(airline):
    spec = {"family": "ets", "error": "additive", "trend": "damped", "season": "none"}
    folds = _folds(airline, spec, True)
    y = np.asarray(airline.values, dtype=float)
    first, second = folds[0], folds[2]

    def model(end):
        return ETSModel(pd.Series(y[:end]), error="add", trend="add", damped_trend=True)

    warm = model(second.train_size).fit(start_params=list(first.params.values()), disp=False)
    assert list(second.params.values()) == list(warm.params)


def test_families_without_start_values_are_unaffected():
    """The order search has no use for start values: with warm_start its results are the
    cold ones (only the recorded plan differs)."""
    rng = np.random.default_rng(4)
    values = 50 + np.cumsum(rng.normal(0.3, 1, 48))
    series = make_series("q", "P3M", [(f"{2000 + i // 4}-Q{i % 4 + 1}", v)
                                      for i, v in enumerate(values)])
    candidates = parse_candidates([{"family": "arima_search", "seasonal": False,
                                    "max_models": 6}])
    bodies = []
    for warm in (False, True):
        plan = parse_plan({"horizon": 2, "max_origins": 3, "refit": 2, "warm_start": warm})
        body = run_backtest([series], candidates, plan).to_dict()
        assert body["plan"]["warm_start"] is warm
        bodies.append(body["series"])
    assert bodies[0] == bodies[1]
