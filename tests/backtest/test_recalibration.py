"""Empirical (split-conformal) intervals from a candidate's own past errors.

References: split-conformal prediction (Vovk, Gammerman & Shafer 2005) per horizon for
multi-step forecasts (Stankeviciute, Alaa & van der Schaar 2021); empirical forecast
intervals (Williams & Goodman 1971). The simulation checks coverage against exact
binomial 99 % bounds (scipy.stats.binom, computed with the installed scipy).
"""

import numpy as np
import pytest
from scipy import stats

from backtest.candidates import parse_candidate, parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.errors import CandidateError
from backtest.plan import parse_plan
from backtest.recalibration import (
    EmpiricalIntervals,
    conformal_offsets,
    known_errors,
    recalibrate,
)
from backtest.results import FoldResult

LEVELS = (80, 95)


def _fold(number, actual, point, half_width, scale=1.0):
    lower = {lv: tuple(p - w for p, w in zip(point, half_width[lv])) for lv in half_width}
    upper = {lv: tuple(p + w for p, w in zip(point, half_width[lv])) for lv in half_width}
    return FoldResult("s", "c1", number, str(number), "0", 10 + number, True, "ok", None,
                      {"phi": 0.5}, (), ("p",) * len(actual), tuple(actual), tuple(point),
                      lower, upper, scale, 1.0)


def test_conformal_ranks_worked_by_hand():
    errors = np.arange(19, 0, -1, dtype=float)  # 1..19, shuffled order does not matter
    # n = 19, 80 %: ranks floor(20 * 0.1) = 2 and ceil(20 * 0.9) = 18
    assert conformal_offsets(errors, 80) == (2.0, 18.0)
    # 95 %: floor(20 * 0.025) = 0 -> clipped to 1, ceil(20 * 0.975) = 20 -> clipped to 19
    assert conformal_offsets(errors, 95) == (1.0, 19.0)
    # n = 39, 95 %: exactly ranks 1 and 39 (40 * 0.975 = 39 despite binary fractions)
    assert conformal_offsets(np.arange(1.0, 40.0), 95) == (1.0, 39.0)


def test_only_errors_observed_at_the_origin_are_used():
    folds = [_fold(i, [float(i), float(10 * i)], [0.0, 0.0], {80: [1, 1]}) for i in range(6)]
    # at fold 5 with step 1: h = 1 errors of folds 0..4, h = 2 errors of folds 0..3
    np.testing.assert_array_equal(known_errors(folds, 5, 1, 1, False), [0, 1, 2, 3, 4])
    np.testing.assert_array_equal(known_errors(folds, 5, 2, 1, False), [0, 10, 20, 30])
    # step 2: fold j is 2 (5 - j) periods back; h = 2 needs (5 - j) * 2 >= 2
    np.testing.assert_array_equal(known_errors(folds, 5, 2, 2, False), [0, 10, 20, 30, 40])


def test_too_few_errors_keep_the_models_intervals_and_say_so():
    folds = [_fold(i, [float(i % 3), float(i % 4)], [0.0, 0.0],
                   {80: [0.5, 0.5], 95: [0.7, 0.7]}) for i in range(8)]
    out = recalibrate(folds, EmpiricalIntervals(min_errors=6), LEVELS, 1)
    # fold 6 has 6 one-step errors and 5 two-step ones: only h = 1 is recalibrated
    assert out[6].params["empirical.errors_h1"] == 6
    assert out[6].params["empirical.horizons"] == 1
    assert out[6].params["phi"] == 0.5
    assert out[6].upper[80][1] == 0.5 and out[6].upper[80][0] != 0.5
    assert out[7].params["empirical.horizons"] == 2
    assert out[2].params["empirical.horizons"] == 0
    assert (out[2].lower, out[2].upper) == (folds[2].lower, folds[2].upper)


def test_scaled_errors_follow_the_current_folds_scale():
    folds = [_fold(i, [float(i % 2) * (1 + i)], [0.0], {80: [0.1]}, scale=1.0 + i)
             for i in range(12)]
    raw = recalibrate(folds, EmpiricalIntervals(min_errors=10), (80,), 1)
    scaled = recalibrate(folds, EmpiricalIntervals(min_errors=10, errors="scaled"), (80,), 1)
    # errors / scale are 0 or 1, so the scaled bounds are 0 and the current scale (12)
    assert (scaled[11].lower[80][0], scaled[11].upper[80][0]) == (0.0, 12.0)
    assert raw[11].upper[80][0] == pytest.approx(10.0)  # ranks 1 and 10 of 0,0,..,2,4,..,10


def test_a_too_narrow_model_reaches_nominal_coverage_after_recalibration():
    """A model whose bounds are half as wide as they should be: Gaussian errors with sd 1,
    stated bounds point +/- z * 0.5. Each replication has 81 earlier folds; its last fold is
    scored (one independent trial per replication) at h = 1 and h = 2. Conformal intervals
    from n errors cover between nominal and nominal + 2/(n + 1) (Vovk et al. 2005); with
    81 and 80 errors the excess is at most 2.5 points (0.5 at the ranks used here)."""
    rng = np.random.default_rng(20)
    reps, n_folds, horizon = 500, 82, 2
    raw_hits = {lv: 0 for lv in LEVELS}
    new_hits = {lv: 0 for lv in LEVELS}
    trials = reps * horizon
    for _ in range(reps):
        errors = rng.standard_normal((n_folds, horizon))
        point = rng.normal(100, 5, (n_folds, horizon))
        narrow = {lv: [0.5 * stats.norm.ppf(0.5 + lv / 200)] * horizon for lv in LEVELS}
        folds = [_fold(i, point[i] + errors[i], point[i], narrow) for i in range(n_folds)]
        last = recalibrate(folds, EmpiricalIntervals(min_errors=40), LEVELS, 1)[-1]
        assert last.params["empirical.horizons"] == horizon
        for lv in LEVELS:
            for h in range(horizon):
                y = last.actuals[h]
                raw_hits[lv] += folds[-1].lower[lv][h] <= y <= folds[-1].upper[lv][h]
                new_hits[lv] += last.lower[lv][h] <= y <= last.upper[lv][h]
    for lv in LEVELS:
        nominal = lv / 100
        low, high = stats.binom.ppf([0.005, 0.995], trials, nominal)
        assert low <= new_hits[lv] <= high, (lv, new_hits[lv], low, high)
        assert raw_hits[lv] < low, (lv, raw_hits[lv], low)


def test_the_option_is_part_of_the_candidate_and_its_label():
    plain = parse_candidate({"family": "benchmark", "method": "naive"})
    same = parse_candidate({"family": "benchmark", "method": "naive", "intervals": "model"})
    empirical = parse_candidate({"family": "benchmark", "method": "naive",
                                 "intervals": {"kind": "empirical", "errors": "scaled"}})
    assert plain.id == same.id and "intervals" not in plain.canonical
    assert empirical.id != plain.id
    assert empirical.canonical["intervals"] == {"kind": "empirical", "min_errors": 20,
                                                "errors": "scaled"}
    assert parse_candidate(empirical.canonical).id == empirical.id
    assert empirical.label(12).endswith(", emp sc")


@pytest.mark.parametrize(("intervals", "message"), [
    ({"kind": "conformal"}, "intervals must be"),
    ({"kind": "empirical", "min_errors": 2}, "min_errors"),
    ({"kind": "empirical", "errors": "relative"}, "errors must be one of"),
    ({"kind": "empirical", "window": 10}, "unknown field"),
])
def test_bad_interval_options_are_refused(intervals, message):
    with pytest.raises(CandidateError, match=message):
        parse_candidate({"family": "benchmark", "method": "naive", "intervals": intervals})


def test_a_model_and_its_recalibrated_twin_are_ranked_and_judged_side_by_side():
    drift = {"family": "benchmark", "method": "drift"}
    twin = {**drift, "intervals": {"kind": "empirical", "min_errors": 10}}
    plan = parse_plan({"horizon": 2, "max_origins": 30, "levels": [80, 95]})
    model, recalibrated = parse_candidates([drift, twin])
    sr = run_backtest(demo_series()[4:5], [model, recalibrated], plan).series[0]
    rows = {r.candidate_id: r for r in sr.ranking}
    # the same point forecasts: the same MASE, one entry in the confidence set, one verdict
    assert rows[model.id].score == rows[recalibrated.id].score
    assert sr.evidence["confidence_set"]["ties"] == [[model.id, recalibrated.id]]
    assert rows[model.id].in_confidence_set == rows[recalibrated.id].in_confidence_set
    # but not the same intervals: calibration is reported for each
    calibration = sr.evidence["calibration"]
    assert calibration[model.id] != calibration[recalibrated.id]
