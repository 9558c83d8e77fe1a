"""Monitoring: expectation, realised points, flag rules on small written-out cases, errors."""

import dataclasses
import json
import math
from datetime import datetime

import numpy as np
import pytest
from scipy import stats

from backtest.ledger import (
    IssuedOutcomes,
    LedgerError,
    Outcome,
    expectation_from_folds,
    monitor,
    score_outcomes,
    untested,
)
from backtest.ledger.coverage_flag import coverage_flags
from backtest.ledger.level_shift import boundary_constant, crossing_probability, cusum_test
from backtest.results import FoldResult

from .simulated import Ar1, ledger, monthly_series


def fold(candidate_id, actuals, point, lower, upper, scale, status="ok"):
    return FoldResult(
        series_key="s", candidate_id=candidate_id, fold=0, origin="2020-01",
        train_start="2019-01", train_size=12, reestimated=True, status=status, reason=None,
        params={}, warnings=(), periods=("2020-02", "2020-03"), actuals=actuals,
        point=point if status == "ok" else None, lower={80: lower}, upper={80: upper},
        scale=scale, scale_sq=1.0)


def one_step(period, hit, error=0.0):
    return Outcome(horizon=1, period=period, actual=error, point=0.0, error=error,
                   scaled_error=error, smape_term=None, hits={80: hit},
                   interval_scores={80: 1.0})


@pytest.fixture(scope="module")
def simulated():
    model = Ar1(horizon=2)
    y = model.path(np.random.default_rng(3), 80)
    return model, monthly_series(y), ledger(model, monthly_series(y), 40, 39)


def test_expectation_from_folds_by_hand():
    folds = [fold("ca", (10.0, 12.0), (9.0, 15.0), (8.0, 13.0), (11.0, 16.0), 2.0),
             fold("ca", (10.0, 12.0), (10.0, 10.0), (9.5, 11.0), (10.5, 11.5), 4.0),
             fold("cb", (10.0, 12.0), (0.0, 0.0), (0.0, 0.0), (1.0, 1.0), 1.0),
             fold("ca", (10.0, 12.0), (0.0, 0.0), (0.0, 0.0), (1.0, 1.0), 1.0, "failed")]
    expectation = expectation_from_folds(folds, "ca", run_id=7)
    # |e|/scale: h=1: 1/2, 0/4; h=2: 3/2, 2/4
    assert expectation.scaled_abs_errors == {1: (0.5, 0.0), 2: (1.5, 0.5)}
    assert expectation.mase_by_horizon == {1: 0.25, 2: 1.0}
    # hits: fold 1: 8<=10<=11 yes, 13<=12 no; fold 2: 9.5<=10<=10.5 yes, 12<=11.5 no
    assert expectation.coverage_by_level == {80: 0.5}
    assert expectation.run_id == 7
    with pytest.raises(LedgerError, match="no successful fold of candidate 'cc'"):
        expectation_from_folds(folds, "cc")


def test_realised_points_average_every_forecast_of_a_period(simulated):
    _, series, history = simulated
    expectation = dataclasses.replace(
        expectation_from_folds([fold("car1", (1.0, 1.0), (1.0, 1.0), (0.0, 0.0),
                                     (2.0, 2.0), 1.0)], "car1"),
        mase_by_horizon={1: 0.6, 2: 0.9})
    report = monitor(history, expectation)
    assert [p.period for p in report.realised] == series.labels()[40:]
    second = report.realised[1]  # reached by the h=2 forecast of origin 40 and h=1 of 41
    first_two = [o for item in history[:2] for o in item.outcomes
                 if o.period == second.period]
    assert second.count == 2 and second.horizons == (1, 2)
    assert second.mase == pytest.approx(np.mean([abs(o.scaled_error) for o in first_two]))
    assert second.coverage[95] == np.mean([o.hits[95] for o in first_two])
    assert second.expected_mase == pytest.approx(0.75)
    assert report.realised[0].count == 1 and report.realised[0].expected_mase == 0.6


def test_a_reissue_from_the_same_origin_replaces_the_earlier_one(simulated):
    _, series, history = simulated
    original = history[5]
    moved = dataclasses.replace(original.forecast,
                                point=tuple(p + 50 for p in original.forecast.point))
    reissue = IssuedOutcomes(999, original.issued_at.replace(hour=12), moved,
                             score_outcomes(moved, series))
    period = original.forecast.periods[0]
    after = next(p for p in monitor([*history, reissue], None).realised if p.period == period)
    kept = [reissue.outcomes[0], history[4].outcomes[1]]  # h=1 of the reissue, h=2 of 4
    assert [o.period for o in kept] == [period, period]
    assert after.count == 2
    assert after.mase == pytest.approx(np.mean([abs(o.scaled_error) for o in kept]))


def test_flags_on_too_little_data_say_so_with_the_count_needed(simulated):
    _, _, history = simulated
    report = monitor(history[:3], None)
    details = {(f.rule, f.level): f for f in report.flags}
    assert set(details) == {("coverage", 80), ("coverage", 95), ("accuracy", None),
                            ("level_shift", None)}
    assert {key: (f.state, f.outcomes, f.needed) for key, f in details.items()} == {
        ("coverage", 80): ("not_enough_data", 3, 12), ("coverage", 95): ("not_enough_data", 3, 12),
        ("accuracy", None): ("not_enough_data", 3, 6),
        ("level_shift", None): ("not_enough_data", 3, 6)}
    assert not any(f.raised for f in report.flags)
    assert "3 one-step outcome(s) at the 80 % level; the coverage test needs at least 12" in (
        details["coverage", 80].detail)
    assert details["accuracy", None].detail == "no backtest expectation to compare with"
    assert "the CUSUM needs at least 6" in details["level_shift", None].detail


def test_a_model_gone_wrong_raises_every_flag():
    # The series moves up 3 sigma when issuing starts; the model keeps the old mean, so its
    # one-step errors centre on 1.5 sigma (phi = 0.5): larger, biased, outside intervals.
    model = Ar1(horizon=2)
    y = model.path(np.random.default_rng(11), 80, shift_at=40, shift=3 * model.sigma)
    folds = [model.fold(y, 10 + k, k) for k in range(28)]  # backtest before the move
    report = monitor(ledger(model, monthly_series(y), 40, 39),
                     expectation_from_folds(folds, "car1"))
    assert all(f.raised for f in report.flags), [f.detail for f in report.flags]
    assert {f.state for f in report.flags} == {"raised"}
    accuracy = next(f for f in report.flags if f.rule == "accuracy")
    assert accuracy.statistic > 1.5 and accuracy.p_value < 0.01


def test_coverage_p_value_is_exact_binomial_by_hand():
    # 20 one-step outcomes, 9 misses of an 80 % interval (nominal miss rate 0.2).
    # Kupiec LR(x) = 2[x ln(x/20 / 0.2) + (20-x) ln((1-x/20) / 0.8)]: LR(9) = 6.3535;
    # LR(0) = -40 ln 0.8 = 8.9257 >= 6.3535, LR(1) = 3.7577 < 6.3535, and LR rises
    # with x above 4, so P(LR >= LR(9)) = P(X = 0) + P(X >= 9) for X ~ Bin(20, 0.2).
    outcomes = [one_step(f"p{i:02d}", i > 9) for i in range(1, 21)]
    (flag,) = coverage_flags(outcomes, 0.05)
    lr9 = 2 * (9 * math.log(0.45 / 0.2) + 11 * math.log(0.55 / 0.8))
    assert flag.statistic == pytest.approx(lr9) and lr9 == pytest.approx(6.3535, abs=1e-4)
    expected_p = stats.binom.pmf(0, 20, 0.2) + stats.binom.sf(8, 20, 0.2)
    assert flag.p_value == pytest.approx(expected_p, rel=1e-12)
    assert expected_p < 0.05 and flag.raised and flag.first_period == "p01"


def test_cusum_boundary_constants_are_the_published_ones():
    # Brown, Durbin & Evans (1975), J. R. Statist. Soc. B 37(2), 149-192, sec. 2.3: a = 0.948
    # at 5 %, 1.143 at 1 %, 0.850 at 10 % (recalled from memory; statsmodels' RecursiveLS
    # source uses the same 1.143 and 0.948).
    assert boundary_constant(0.05) == pytest.approx(0.948, abs=5e-4)
    assert boundary_constant(0.01) == pytest.approx(1.143, abs=5e-4)
    assert boundary_constant(0.10) == pytest.approx(0.850, abs=5e-4)
    assert crossing_probability(boundary_constant(0.05)) == pytest.approx(0.05, abs=1e-10)


def test_cusum_of_a_steady_drift_by_hand():
    # z = 1 nine times: S_r = r, boundary 0.948 (3 + 2r/3); r - 0.632 r > 2.844 first at
    # r = 8 (8 > 7.90); a* = max r / (3 + 2r/3) = 9/9 = 1 at r = 9;
    # p = 2[1 - Phi(3) + e^-4 Phi(1)] = 0.033519 (normal table values).
    test = cusum_test(np.ones(9), 0.05)
    assert test.first_crossing == 7
    assert test.a_star == pytest.approx(1.0)
    assert test.p_value == pytest.approx(2 * (0.0013499 + math.exp(-4) * 0.8413447), abs=1e-6)


def test_level_shift_flag_names_the_period_of_the_first_crossing(simulated):
    model, series, history = simulated
    shifted = [dataclasses.replace(item, outcomes=tuple(
        dataclasses.replace(o, error=o.error + (3 * model.sigma if i >= 20 else 0.0))
        for o in item.outcomes)) for i, item in enumerate(history)]
    flag = next(f for f in monitor(shifted, None).flags if f.rule == "level_shift")
    assert flag.raised and flag.p_value < 0.05
    assert flag.first_period >= history[20].forecast.periods[0]
    assert "crosses the boundary (a = 0.948) first at " + flag.first_period in flag.detail


def test_report_is_json_ready_and_an_unbounded_interval_is_left_out(simulated):
    _, series, history = simulated
    first = history[0].forecast
    unbounded = dataclasses.replace(first, upper={**first.upper, 95: (math.inf, math.inf)})
    edited = [IssuedOutcomes(1, history[0].issued_at, unbounded,
                             score_outcomes(unbounded, series)), *history[1:]]
    report = monitor(edited, None)
    shift = next(f for f in report.flags if f.rule == "level_shift")
    assert shift.detail.endswith("; 1 without a finite interval left out")
    assert shift.detail.startswith(f"CUSUM of {len(history) - 1} standardised")
    body = report.to_dict()
    text = json.dumps(body, allow_nan=False)
    assert body["series_key"] == "sim" and '"rule": "coverage"' in text
    assert body["realised"][0]["coverage"].keys() == {"80", "95"}
    assert body["realised"][0]["interval_score"]["95"] is None  # infinite score


def test_bad_monitoring_requests_are_refused(simulated):
    _, _, history = simulated
    other = dataclasses.replace(history[1], forecast=dataclasses.replace(
        history[1].forecast, candidate_id="cother"))
    expectation = expectation_from_folds(
        [fold("cx", (1.0, 1.0), (1.0, 1.0), (0.0, 0.0), (2.0, 2.0), 1.0)], "cx")
    cases = [
        (([], None), {}, "no issued forecasts to monitor"),
        (([history[0], other], None), {}, "forecast 2 is of series 'sim' and candidate "
                                          "'cother'"),
        ((history, expectation), {}, "expectation is of candidate 'cx'"),
        ((history, None), {"false_alarm": 0.7}, "false_alarm must be a rate between 0 and"),
    ]
    for args, options, message in cases:
        with pytest.raises(LedgerError, match=message):
            monitor(*args, **options)


def test_the_latest_issued_at_wins_whatever_the_list_order_or_id(simulated):
    _, series, history = simulated
    moved = dataclasses.replace(history[0].forecast,
                                point=tuple(p + 50 for p in history[0].forecast.point))
    earlier = IssuedOutcomes(50, datetime(2019, 1, 1), moved, score_outcomes(moved, series))
    report = monitor([history[0], earlier, *history[1:]], None)
    assert report.realised == monitor(history, None).realised
    assert report.realised != monitor([earlier, *history[1:]], None).realised


def test_three_misses_of_three_are_not_enough_data_not_clear(simulated):
    """Every one of 3 actuals outside the 95 % interval: the rule cannot test yet, and
    says so instead of reading as an all-clear."""
    _, _, history = simulated
    missed = [dataclasses.replace(item, outcomes=tuple(
        dataclasses.replace(o, hits={level: False for level in o.hits}) for o in item.outcomes))
        for item in history[:3]]
    coverage = [f for f in monitor(missed, None).flags if f.rule == "coverage"]
    assert [(f.level, f.state, f.outcomes, f.needed) for f in coverage] == [
        (80, "not_enough_data", 3, 12), (95, "not_enough_data", 3, 12)]


def test_a_candidate_never_issued_has_every_rule_untested():
    report = untested("sales/north", "c1", None)
    assert report.realised == ()
    assert [(f.rule, f.level, f.state, f.outcomes, f.needed) for f in report.flags] == [
        ("coverage", None, "not_enough_data", 0, 12), ("accuracy", None, "not_enough_data", 0, 6),
        ("level_shift", None, "not_enough_data", 0, 6)]


def test_a_tested_rule_that_does_not_reject_is_clear(simulated):
    _, _, history = simulated
    report = monitor(history, None)
    coverage = [f for f in report.flags if f.rule == "coverage"]
    assert coverage and all(f.state == "clear" and f.outcomes >= f.needed for f in coverage)
