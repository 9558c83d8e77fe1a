"""Forecast combinations: the variance reduction theory predicts, per-origin selection
without look-ahead, and the combination run by the engine.

Reference: Bates & Granger (1969): the equal-weight mean of two unbiased forecasts with
independent errors of variances s1^2 and s2^2 has error variance (s1^2 + s2^2) / 4. The
sample-variance check uses the chi-squared 99 % interval (scipy.stats.chi2, computed with
the installed scipy).
"""

import re
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from backtest.candidates import parse_candidate, parse_candidates
from backtest.combining import MIN_SELECTION_FOLDS, combine_folds
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.errors import CandidateError
from backtest.plan import parse_plan
from backtest.results import FoldResult

NAIVE = {"family": "benchmark", "method": "naive"}
DRIFT = {"family": "benchmark", "method": "drift"}


def _fold(number, actual, point, candidate="m"):
    return FoldResult("s", candidate, number, str(number), "0", 10 + number, True, "ok", None,
                      {}, (), ("p",), (float(actual),), (float(point),),
                      {80: (point - 1.0,)}, {80: (point + 1.0,)}, 1.0, 1.0)


def _spec(rule):
    return parse_candidate({"family": "combination", "members": [NAIVE, DRIFT],
                            "rule": rule}).spec


def test_the_mean_of_two_independent_unbiased_forecasts_has_the_predicted_variance():
    rng = np.random.default_rng(1969)
    n, s1, s2 = 4000, 1.0, 1.5
    truth = rng.normal(50, 10, n)
    first = [_fold(i, truth[i], truth[i] + rng.normal(0, s1)) for i in range(n)]
    second = [_fold(i, truth[i], truth[i] + rng.normal(0, s2)) for i in range(n)]
    combined = combine_folds("c", _spec("mean"), [first, second], (80,), 0)
    errors = np.array([f.actuals[0] - f.point[0] for f in combined])
    predicted = (s1**2 + s2**2) / 4  # 0.8125, below either member's variance
    low, high = stats.chi2.ppf([0.005, 0.995], n - 1) / (n - 1) * predicted
    assert low <= errors.var(ddof=1) <= high
    assert high < min(s1, s2) ** 2
    assert combined[0].params == {"weight.1": 0.5, "weight.2": 0.5, "selection.folds": 0.0}


def test_the_median_rule_takes_the_median():
    members = [[_fold(0, 10, p)] for p in (1.0, 5.0, 30.0)]
    spec = parse_candidate({"family": "combination", "rule": "median",
                            "members": [NAIVE, DRIFT, {"family": "benchmark",
                                                       "method": "mean"}]}).spec
    (fold,) = combine_folds("c", spec, members, (80,), 0)
    assert fold.point == (5.0,) and fold.lower[80] == (4.0,)


def test_the_confidence_set_rule_drops_a_bad_member_from_known_folds_only():
    rng = np.random.default_rng(3)
    n = 40
    truth = rng.normal(100, 5, n)
    good = [_fold(i, truth[i], truth[i] + rng.normal(0, 0.5)) for i in range(n)]
    bad = [_fold(i, truth[i], truth[i] + 8 + rng.normal(0, 0.5)) for i in range(n)]
    combined = combine_folds("c", _spec("confidence_set"), [good, bad], (80,), 0)
    before = combined[MIN_SELECTION_FOLDS - 1].params
    after = combined[MIN_SELECTION_FOLDS + 5].params
    assert (before["weight.1"], before["weight.2"]) == (0.5, 0.5)
    assert before["selection.folds"] == MIN_SELECTION_FOLDS - 1
    assert (after["weight.1"], after["weight.2"]) == (1.0, 0.0)
    # the selection at an origin ignores what happens from that origin on
    changed = [replace(f, actuals=(f.actuals[0] + 50.0,)) if f.fold >= 20 else f for f in bad]
    again = combine_folds("c", _spec("confidence_set"), [good, changed], (80,), 0)
    assert [f.params for f in again[:21]] == [f.params for f in combined[:21]]


def test_a_failed_member_fails_the_combined_fold_and_says_which():
    ok = _fold(0, 1.0, 1.0)
    failed = replace(ok, status="failed", reason="ValueError: no", point=None, lower={},
                     upper={})
    (fold,) = combine_folds("c", _spec("mean"), [[ok], [failed]], (80,), 0)
    assert fold.status == "failed" and fold.reason == "member 2: ValueError: no"


def test_the_engine_runs_a_combination_beside_its_members():
    series = demo_series()[:1]
    plan = parse_plan({"horizon": 2, "max_origins": 30, "levels": [80, 95]})
    combination = {"family": "combination", "members": [NAIVE, DRIFT]}
    candidates = parse_candidates([NAIVE, DRIFT, combination])
    sr = run_backtest(series, candidates, plan).series[0]
    by_id = {c.id: [f for f in sr.folds if f.candidate_id == c.id] for c in candidates}
    naive, drift, combined = (by_id[c.id] for c in candidates)
    for a, b, c in zip(naive, drift, combined):
        np.testing.assert_allclose(c.point, (np.array(a.point) + np.array(b.point)) / 2)
    # empirical intervals by default: from fold 20 on (20 one-step errors) at h = 1
    assert combined[19].params["empirical.horizons"] == 0
    assert combined[20].params["empirical.horizons"] == 1
    assert combined[20].upper[80] != tuple((np.array(naive[20].upper[80])
                                            + np.array(drift[20].upper[80])) / 2)
    row = next(r for r in sr.ranking if r.candidate_id == candidates[2].id)
    assert re.fullmatch(r"Mean of Naive\+Drift #[0-9a-f]{4}, emp", row.label)
    assert row.rank is not None
    assert sr.evidence["diagnostics"][candidates[2].id] is None


def test_fitted_outside_a_backtest_the_mean_rule_averages_the_members():
    y = demo_series()[0].values[:60].astype(float)
    spec = _spec("mean")
    fit, forecast = spec.fit_forecast(y, 12, 3, (80,), 0)
    naive, drift = spec.members
    a = naive.fit_forecast(y, 12, 3, (80,), 0)[1]
    b = drift.fit_forecast(y, 12, 3, (80,), 0)[1]
    np.testing.assert_allclose(forecast.mean, (a.mean + b.mean) / 2)
    np.testing.assert_allclose(forecast.upper[80], (a.upper[80] + b.upper[80]) / 2)
    with pytest.raises(CandidateError, match="outside a backtest"):
        _spec("confidence_set").fit(y, 12)


@pytest.mark.parametrize(("body", "message"), [
    ({"members": [NAIVE]}, "2 to 8"),
    ({"members": [NAIVE, NAIVE]}, "repeats"),
    ({"members": [NAIVE, {"family": "combination", "members": [NAIVE, DRIFT]}]}, "nest"),
    ({"members": [NAIVE, {"family": "arima"}]}, "member 2"),
    ({"members": [NAIVE, DRIFT], "rule": "best"}, "combination rule"),
])
def test_bad_combinations_are_refused(body, message):
    with pytest.raises(CandidateError, match=message):
        parse_candidate({"family": "combination", **body})
