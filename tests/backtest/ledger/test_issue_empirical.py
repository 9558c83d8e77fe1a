"""Issuing a candidate with empirical intervals, and a combination, from backtest folds.

The expected bounds are rebuilt here from the conformal ranks of the split-conformal
method (Vovk, Gammerman & Shafer 2005): with n errors sorted, ranks floor((n+1)a/2) and
ceil((n+1)(1-a/2)).
"""

import math

import numpy as np
import pytest

from backtest.candidates import parse_candidate
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.ledger import LedgerError, issue_forecast
from backtest.plan import parse_plan
from backtest.series import make_series

NAIVE = {"family": "benchmark", "method": "naive"}
EMPIRICAL = {**NAIVE, "intervals": {"kind": "empirical", "min_errors": 15}}


@pytest.fixture(scope="module")
def backtested():
    series = demo_series()[0]
    plan = parse_plan({"horizon": 2, "max_origins": 24, "levels": [80, 95]})
    candidate = parse_candidate(EMPIRICAL)
    sr = run_backtest([series], [candidate], plan).series[0]
    return series, candidate, tuple(f for f in sr.folds if f.candidate_id == candidate.id)


def _ranks(n, level):
    a = 1 - level / 100
    low, high = math.floor((n + 1) * a / 2 + 1e-9), math.ceil((n + 1) * (1 - a / 2) - 1e-9)
    return min(max(low, 1), n), min(max(high, 1), n)  # clipped to the sample, as documented


def test_issued_bounds_come_from_every_backtest_error_at_each_horizon(backtested):
    series, candidate, folds = backtested
    issued = issue_forecast(series, candidate, horizon=3, levels=(80, 95),
                            backtest_folds=folds)
    own = issue_forecast(series, parse_candidate(NAIVE), horizon=3, levels=(80, 95))
    assert issued.point == own.point
    for h in (1, 2):
        errors = np.sort([f.actuals[h - 1] - f.point[h - 1] for f in folds])
        for level in (80, 95):
            low, high = _ranks(len(errors), level)
            assert issued.lower[level][h - 1] == pytest.approx(own.point[h - 1]
                                                               + errors[low - 1])
            assert issued.upper[level][h - 1] == pytest.approx(own.point[h - 1]
                                                               + errors[high - 1])
    # h = 3 lies beyond the backtest's horizon: the model's own bounds are issued there
    assert issued.upper[95][2] == own.upper[95][2]
    assert issued.params["empirical.errors_h1"] == 24
    assert issued.params["empirical.horizons"] == 2
    assert issued.candidate_spec["intervals"]["kind"] == "empirical"


def test_an_earlier_version_uses_only_the_errors_it_has_seen(backtested):
    series, candidate, folds = backtested
    cut = len(series) - 10
    earlier = make_series(series.key, "P1M", list(zip(series.labels()[:cut],
                                                      series.values[:cut])),
                          season_length=series.season_length)
    issued = issue_forecast(earlier, candidate, horizon=1, backtest_folds=folds)
    seen = [f for f in folds if earlier.index_of(f.periods[0]) < cut]
    assert issued.params["empirical.errors_h1"] == len(seen) < len(folds)


def test_empirical_intervals_need_the_backtest_folds(backtested):
    series, candidate, _ = backtested
    with pytest.raises(LedgerError, match="needs? its backtest folds"):
        issue_forecast(series, candidate, horizon=2)


def test_a_mean_combination_is_issued_with_its_own_empirical_intervals():
    series = demo_series()[0]
    plan = parse_plan({"horizon": 1, "max_origins": 24})
    candidate = parse_candidate({"family": "combination", "members": [
        NAIVE, {"family": "benchmark", "method": "drift"}]})
    sr = run_backtest([series], [candidate], plan).series[0]
    folds = tuple(f for f in sr.folds if f.candidate_id == candidate.id)
    issued = issue_forecast(series, candidate, horizon=1, backtest_folds=folds)
    assert issued.params["empirical.horizons"] == 1
    assert {"1.sigma", "2.sigma", "empirical.errors_h1"} <= set(issued.params)
