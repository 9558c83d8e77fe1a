"""Each fold of a closed-form family carries the warnings of its own origin only.

Before the fix the Theta folds were computed in one pass and a warning raised at any
origin was attached to every fold, so later folds carried warnings from short early
windows (and early folds warnings caused by data after their origin).
"""

import warnings

import pytest
from statsmodels.datasets import nile
from statsmodels.tsa.forecasting.theta import ThetaModel

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series


@pytest.fixture(scope="module")
def annual():
    """The Nile's annual flow at Aswan, 1871-1970 (Cobb 1978; statsmodels' ``nile``)."""
    data = nile.load_pandas().data
    return make_series("nile", "P1Y", zip(data["year"].astype(int).astype(str),
                                          data["volume"]))


def _statsmodels_warnings(window, horizon: int, levels) -> tuple[str, ...]:
    """What statsmodels itself raises for one window (ThetaModel, no seasonal step)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fitted = ThetaModel(window, period=1, deseasonalize=False, use_test=False).fit()
        fitted.forecast(horizon)
        for level in levels:
            fitted.prediction_intervals(horizon, alpha=1 - level / 100)
    return tuple(dict.fromkeys(f"{w.category.__name__}: {w.message}" for w in caught))


def test_theta_folds_carry_their_own_warnings(annual):
    plan = parse_plan({"horizon": 2, "first_origin": {"train_size": 6}, "step": 3,
                       "benchmark": "naive"})
    theta = parse_candidates([{"family": "theta", "season": "never"}])[0]
    result = run_backtest([annual], [theta], plan).series[0]
    folds = sorted((f for f in result.folds if f.candidate_id == theta.id),
                   key=lambda f: f.fold)
    values = annual.values
    expected = [_statsmodels_warnings(values[:f.train_size], plan.horizon, plan.levels)
                for f in folds]
    assert [f.warnings for f in folds] == expected
    warned = [f.fold for f in folds if f.warnings]
    assert warned and len(warned) < len(folds)  # some, not all: the check can fail
    assert not folds[-1].warnings
