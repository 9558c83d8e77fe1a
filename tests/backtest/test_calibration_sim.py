"""Interval calibration on data simulated from a known ARIMA process.

If the model is right, the share of h = 1 actuals inside the 80 % and 95 % intervals must
lie within the central 99 % range of a binomial distribution with that nominal rate
(binomial bounds from scipy.stats.binom). The h = 1 hits from successive origins are
independent under a correct model, which is why only h = 1 is checked this strictly.
"""

import numpy as np
from scipy import stats

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series


def _ar1_series(key, seed, n=260, phi=0.6, mean=40.0, sd=2.0):
    rng = np.random.default_rng(seed)
    x = np.empty(n)
    x[0] = rng.normal(0, sd / np.sqrt(1 - phi**2))
    for t in range(1, n):
        x[t] = phi * x[t - 1] + rng.normal(0, sd)
    return make_series(key, "P1W", [
        (str(np.datetime64("2000-01-03") + np.timedelta64(7 * i, "D")), mean + v)
        for i, v in enumerate(x)])


def test_h1_coverage_of_a_correct_model_is_within_binomial_bounds():
    series = [_ar1_series(f"sim{i}", seed=100 + i) for i in range(3)]
    candidates = parse_candidates([{"family": "arima", "order": [1, 0, 0],
                                    "deterministic": "constant"}])
    plan = parse_plan({"horizon": 1, "first_origin": {"train_size": 120}, "refit": "once",
                       "benchmark": "naive"})
    result = run_backtest(series, candidates, plan)
    hits = {80: [], 95: []}
    for sr in result.series:
        for f in sr.folds:
            if f.candidate_id == candidates[0].id:
                for level in hits:
                    hits[level].append(f.lower[level][0] <= f.actuals[0] <= f.upper[level][0])
    for level, sample in hits.items():
        n, k = len(sample), int(np.sum(sample))
        low, high = stats.binom.ppf([0.005, 0.995], n, level / 100)
        assert n == 3 * 140
        assert low <= k <= high, f"{level} %: {k} of {n} inside"
