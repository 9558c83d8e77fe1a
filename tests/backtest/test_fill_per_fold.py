"""A ``linear`` fill never lets a fold see past its origin, and filled periods are no actuals.

Before the fix the gap was interpolated over the whole series before the folds were cut:
a fold whose last training period was missing trained on a value interpolated from its own
first actual, and the made-up values were scored as if observed.
"""

import numpy as np
import pytest
from statsmodels.datasets import nile

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series

GAP = "1900"
SPIKE = 20.0


@pytest.fixture(scope="module")
def gappy():
    """The Nile's annual flow (Cobb 1978; statsmodels' ``nile``) up to 1915, without 1900
    and with 1901 multiplied by 20: a gap followed by a spike."""
    data = nile.load_pandas().data
    rows = [(str(int(y)), v * (SPIKE if int(y) == 1901 else 1.0))
            for y, v in zip(data["year"], data["volume"]) if str(int(y)) != GAP and y <= 1915]
    return make_series("nile-gap", "P1Y", rows, fill="linear"), dict(rows)


def _run(series, specs, **plan):
    body = {"horizon": 2, "first_origin": {"period": "1890"}, "step": 1,
            "benchmark": "naive", **plan}
    return run_backtest([series], parse_candidates(specs), parse_plan(body)).series[0]


@pytest.mark.parametrize("spec", [
    {"family": "benchmark", "method": "naive"},
    {"family": "arima", "order": [0, 1, 0]},  # the naive forecast, by likelihood estimation
])
def test_a_missing_last_training_period_is_carried_forward(gappy, spec):
    """The naive forecast is the last observed value (Hyndman & Athanasopoulos 2021, 5.2,
    recalled); the origin 1900 is missing, so it is 1899's value, not one interpolated
    towards the 1901 spike."""
    series, observed = gappy
    sr = _run(series, [spec], refit=3)
    cid = sr.candidates[0].candidate_id
    fold = next(f for f in sr.folds if f.origin == GAP and f.candidate_id == cid)
    assert fold.point[0] == pytest.approx(observed["1899"], rel=1e-9)
    interpolated = (observed["1899"] + observed["1901"]) / 2
    assert series.values[series.index_of(GAP)] == pytest.approx(interpolated)
    later = next(f for f in sr.folds if f.origin == "1901" and f.candidate_id == cid)
    assert later.point[0] == pytest.approx(observed["1901"], rel=1e-9)


def test_filled_periods_are_left_out_of_the_scores(gappy):
    series, observed = gappy
    sr = _run(series, [{"family": "benchmark", "method": "naive"}])
    folds = [f for f in sr.folds if f.status == "ok"]
    errors = [abs(a - p) for f in folds for period, a, p in zip(f.periods, f.actuals, f.point)
              if period != GAP]
    filled_points = sum(period == GAP for f in folds for period in f.periods)
    assert filled_points == 2  # 1900 is h = 1 of one fold and h = 2 of another
    mae = next(s for s in sr.scores if s.metric == "mae" and s.horizon is None)
    assert mae.count == len(folds) * 2 - filled_points
    assert mae.value == pytest.approx(np.mean(errors), rel=1e-12)
    assert mae.note == "2 filled period(s) left out: not observed"
    coverage = next(s for s in sr.scores if s.metric == "coverage" and s.horizon == 1)
    assert coverage.count == len(folds) - 1 and "1 filled period" in coverage.note
    level = sr.evidence["calibration"][sr.candidates[0].candidate_id][0]
    assert level["by_horizon"][0]["trials"] == len(folds) - 1


def test_the_ledgers_promise_leaves_filled_periods_out_like_the_scores(gappy):
    """The monitoring yardstick (backtest MASE per horizon, coverage per level) is the
    backtest's own scores: the filled 1900 is no actual there either."""
    from backtest.ledger import expectation_from_folds

    series, _ = gappy
    sr = _run(series, [{"family": "benchmark", "method": "naive"}], levels=[80])
    cid = sr.candidates[0].candidate_id
    promise = expectation_from_folds(sr.folds, cid, filled=series.filled)
    score = {(s.metric, s.horizon, s.level): s for s in sr.scores}
    for h in (1, 2):
        assert promise.mase_by_horizon[h] == pytest.approx(score["mase", h, None].value,
                                                           rel=1e-12)
        assert len(promise.scaled_abs_errors[h]) == score["mase", h, None].count
    assert promise.coverage_by_level[80] == pytest.approx(score["coverage", None, 80].value,
                                                          rel=1e-12)
    counted = expectation_from_folds(sr.folds, cid)  # as before the fix: 1900 scored
    assert sum(map(len, counted.scaled_abs_errors.values())) == (
        sum(map(len, promise.scaled_abs_errors.values())) + 2)
    assert counted.mase_by_horizon[1] != pytest.approx(promise.mase_by_horizon[1])
