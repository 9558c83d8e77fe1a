"""Plans and the forecast origins they produce."""

import pytest

from backtest.errors import PlanError, SeriesError
from backtest.folds import plan_origins
from backtest.plan import parse_plan
from backtest.series import make_series


def _series(n):
    return make_series("ops", "P1M", [(f"{2015 + i // 12}-{i % 12 + 1:02d}", float(i))
                                      for i in range(n)])


def test_expanding_origins_run_while_a_full_horizon_of_actuals_exists():
    origins = plan_origins(_series(40), parse_plan({"horizon": 6, "step": 2,
                                                    "first_origin": {"train_size": 24}}), 10)
    assert [o.end for o in origins] == [24, 26, 28, 30, 32, 34]
    assert all(o.start == 0 for o in origins)


def test_max_origins_keeps_the_latest():
    plan = parse_plan({"horizon": 6, "max_origins": 3, "first_origin": {"train_size": 24}})
    assert [o.end for o in plan_origins(_series(40), plan, 10)] == [32, 33, 34]


def test_sliding_window_and_first_origin_by_period():
    plan = parse_plan({"horizon": 3, "window": {"kind": "sliding", "length": 12},
                       "first_origin": {"period": "2016-08"}})
    origins = plan_origins(_series(24), plan, 5)
    assert origins[0].end == 20 and origins[0].start == 8
    assert all(o.end - o.start == 12 for o in origins)


@pytest.mark.parametrize(("refit", "expected"), [
    (1, [True] * 6), (2, [True, False] * 3), (4, [True, False, False, False, True, False]),
    ("once", [True] + [False] * 5)])
def test_refit_cadence(refit, expected):
    plan = parse_plan({"horizon": 1, "refit": refit, "first_origin": {"train_size": 10}})
    assert [o.reestimate for o in plan_origins(_series(16), plan, 5)] == expected


def test_too_few_observations_say_how_many_are_needed():
    plan = parse_plan({"horizon": 12, "first_origin": {"train_size": 36}})
    with pytest.raises(SeriesError, match=r"series 'ops' has 40 observations; the plan needs "
                                          r"at least 48 \(36 for the first training window"):
        plan_origins(_series(40), plan, 10)


def test_first_window_smaller_than_the_candidates_need():
    plan = parse_plan({"horizon": 2, "first_origin": {"train_size": 8}})
    with pytest.raises(SeriesError, match=r"first training window has 8 observations; the "
                                          r"candidates need at least 26"):
        plan_origins(_series(40), plan, 26)


@pytest.mark.parametrize(("body", "message"), [
    ({}, r"plan horizon is required"),
    ({"horizon": 0}, r"plan horizon must be a positive integer, got 0"),
    ({"horizon": 3, "refit": "sometimes"}, r"plan refit must be a positive integer"),
    ({"horizon": 3, "window": "rolling"}, r"plan window must be"),
    ({"horizon": 3, "levels": [80, 100]}, r"whole percentages from 1 to 99, got 100"),
    ({"horizon": 3, "levels": [80, 80]}, r"plan levels repeat a value"),
    ({"horizon": 3, "rank_horizon": 4}, r"rank_horizon 4 exceeds the horizon 3"),
    ({"horizon": 3, "rank_by": "r2"}, r"plan rank_by must be one of"),
    ({"horizon": 3, "first_origin": {"train_size": 5, "period": "2020-01"}}, r"first_origin"),
    ({"horizon": 3, "cadence": 2}, r"unknown field\(s\) cadence"),
    ([3], r"the plan must be a JSON object"),
])
def test_bad_plans_are_rejected(body, message):
    with pytest.raises(PlanError, match=message):
        parse_plan(body)


def test_first_origin_period_before_the_series_starts():
    plan = parse_plan({"horizon": 1, "first_origin": {"period": "2010-01"}})
    with pytest.raises(PlanError, match=r"lies before series 'ops' starts"):
        plan_origins(_series(20), plan, 2)


def test_canonical_plans_parse_back_to_the_same_plan():
    for body in ({"horizon": 4}, {"horizon": 4, "first_origin": {"period": "2016-03"},
                                  "window": {"kind": "sliding", "length": 12}, "refit": "once",
                                  "warm_start": True, "levels": [50, 90]}):
        plan = parse_plan(body)
        assert parse_plan(plan.canonical()) == plan


def test_seeds_fit_a_signed_32_bit_column():
    assert parse_plan({"horizon": 1, "seed": 2**31 - 1}).seed == 2**31 - 1
    with pytest.raises(PlanError, match=r"from 0 to 2\*\*31-1"):
        parse_plan({"horizon": 1, "seed": 2**31})
