"""Accuracy measures against published definitions, on a small quarterly example.

Check values: an invented quarterly toy series, results computed by hand and with numpy
2.4.6 from the definitions (recalled) in Hyndman & Koehler (2006) for MASE (and the M4
seasonal scaling, Makridakis, Spiliotis & Assimakopoulos 2020), the M5 guide for RMSSE
(Makridakis et al. 2022), the M4 sMAPE and MSIS, and Winkler (1972) / Gneiting & Raftery
(2007, eq. 43, equation number recalled) for the interval score. Each expected value is
also re-derived by hand below where short.
"""

import numpy as np
import pytest

from backtest import metrics
from backtest.results import FoldResult
from backtest.scoring import score_candidate

TRAIN = np.array([12, 15, 20, 14, 13, 17, 22, 15, 15, 18, 24, 17], float)
TEST = np.array([16, 20, 25, 18], float)
FORECAST = np.array([15, 19, 26, 17], float)
L95 = np.array([14, 18, 21, 18.5])
U95 = np.array([18, 21, 24, 22])


def test_scales_are_in_sample_naive_errors():
    assert metrics.mase_scale(TRAIN, 1) == pytest.approx(47 / 11, abs=1e-12)
    assert metrics.mase_scale(TRAIN, 4) == pytest.approx(13 / 8, abs=1e-12)
    assert metrics.rmsse_scale(TRAIN) == pytest.approx(23.181818, abs=1e-6)


def test_mase_seasonal_and_nonseasonal():
    assert metrics.mase(TEST, FORECAST, TRAIN, 1) == pytest.approx(0.234043, abs=1e-6)
    assert metrics.mase(TEST, FORECAST, TRAIN, 4) == pytest.approx(0.615385, abs=1e-6)


def test_rmsse_and_smape_m4():
    assert metrics.rmsse(TEST, FORECAST, TRAIN) == pytest.approx(0.207695, abs=1e-6)
    assert metrics.smape(TEST, FORECAST) == pytest.approx(5.303918, abs=1e-6)


def test_smape_is_the_m4_form_with_absolute_values():
    # y = 1, f = -3: the M4 form (absolute values in the denominator) gives 200 %
    assert metrics.smape(np.array([1.0]), np.array([-3.0])) == pytest.approx(200.0)
    assert np.isnan(metrics.smape_terms(np.array([0.0]), np.array([0.0]))[0])


def test_interval_score_coverage_and_msis():
    scores = metrics.interval_score(L95, U95, TEST, 95)
    np.testing.assert_allclose(scores, [4, 3, 43, 23.5], atol=1e-9)
    assert metrics.hits(L95, U95, TEST).mean() == 0.5
    assert metrics.msis(L95, U95, TEST, TRAIN, 4) == pytest.approx(11.307692, abs=1e-6)
    assert metrics.msis(L95, U95, TEST, TRAIN, 1) == pytest.approx(4.300532, abs=1e-6)
    np.testing.assert_allclose(metrics.interval_score(L95, U95, TEST, 80), [4, 3, 13, 8.5])


def _fold(actual, point, lower, upper, scale, scale_sq, number=0):
    return FoldResult("s", "c1", number, "o", "t", 12, True, "ok", None, {}, (), ("a",) * 4,
                      tuple(actual), tuple(point), {95: tuple(lower)}, {95: tuple(upper)},
                      scale, scale_sq)


def test_pooled_scores_of_one_fold_equal_the_path_measures():
    fold = _fold(TEST, FORECAST, L95, U95, 13 / 8, metrics.rmsse_scale(TRAIN))
    scores = {(s.metric, s.level): s for s in score_candidate("c1", [fold], 4, [95])
              if s.horizon is None}
    assert scores["mase", None].value == pytest.approx(0.615385, abs=1e-6)
    assert scores["rmsse", None].value == pytest.approx(0.207695, abs=1e-6)
    assert scores["smape", None].value == pytest.approx(5.303918, abs=1e-6)
    assert scores["coverage", 95].value == 0.5
    assert scores["winkler", 95].value == pytest.approx(18.375)
    assert scores["msis", 95].value == pytest.approx(11.307692, abs=1e-6)
    assert scores["me", None].value == pytest.approx(np.mean(TEST - FORECAST))


def test_per_horizon_scores_average_over_folds_with_each_folds_scale():
    a = _fold([10, 10, 10, 10], [8, 10, 10, 10], L95, U95, 2.0, 4.0, 0)
    b = _fold([10, 10, 10, 10], [13, 10, 10, 10], L95, U95, 1.0, 1.0, 1)
    h1 = {s.metric: s for s in score_candidate("c1", [a, b], 4, [95])
          if s.horizon == 1 and s.level is None}
    assert h1["mase"].value == pytest.approx((2 / 2 + 3 / 1) / 2)
    assert h1["rmsse"].value == pytest.approx(np.sqrt((4 / 4 + 9 / 1) / 2))
    assert h1["mae"].value == pytest.approx(2.5)


def test_zero_scale_gives_null_with_a_reason_never_inf():
    flat = _fold(TEST, FORECAST, L95, U95, 0.0, 0.0)
    pooled = {s.metric: s for s in score_candidate("c1", [flat], 4, [95]) if s.horizon is None}
    for name in ("mase", "rmsse", "msis"):
        assert pooled[name].value is None
        assert "zero" in pooled[name].note
    assert pooled["mae"].value == pytest.approx(1.0)


def test_failed_folds_only_give_null_scores():
    failed = FoldResult("s", "c1", 0, "o", "t", 12, True, "failed", "boom", None, (), ("a",),
                        (1.0,), None, {}, {}, 1.0, 1.0)
    scores = score_candidate("c1", [failed], 1, [80])
    assert all(s.value is None and s.note == "no fold completed" for s in scores)


def test_pooled_and_fold_mean_rmsse_are_distinct_scores():
    # Two folds of one-step scale 1 and 4: fold RMSSEs sqrt((4+0+0+0)/4 / 1) = 1 and
    # sqrt((36+0+0+0)/4 / 4) = 1.5. Pooled (one root over all points, Hyndman & Koehler
    # 2006 scaled errors): sqrt((4/1 + 36/4) / 8) = sqrt(13/8) = 1.274755; M5's per-series
    # RMSSE (Makridakis, Spiliotis & Assimakopoulos 2022, one path each) averaged over the
    # folds: (1 + 1.5) / 2 = 1.25; each fold alone equals metrics.rmsse on its path.
    a = _fold([10, 10, 10, 10], [8, 10, 10, 10], L95, U95, 1.0, 1.0, 0)
    b = _fold([10, 10, 10, 10], [16, 10, 10, 10], L95, U95, 2.0, 4.0, 1)
    pooled = {s.metric: s for s in score_candidate("c1", [a, b], 4, [95])
              if s.horizon is None and s.level is None}
    assert pooled["rmsse"].value == pytest.approx(np.sqrt(13 / 8), rel=1e-12)
    assert pooled["rmsse_fold_mean"].value == pytest.approx(1.25, rel=1e-12)
    assert pooled["rmsse_fold_mean"].count == 2
    train_a = np.array([0.0, 1.0])  # one-step scale 1
    assert metrics.rmsse(np.array(a.actuals), np.array(a.point), train_a) == pytest.approx(1.0)
    h1 = {s.metric: s for s in score_candidate("c1", [a, b], 4, [95])
          if s.horizon == 1 and s.level is None}
    assert h1["rmsse_fold_mean"].value == pytest.approx((2 / 1 + 6 / 2) / 2)


def test_rmsse_fold_mean_is_rankable_in_plans_and_the_bi_ranking():
    from backtest.plan import RANK_SCORES, parse_plan
    from storage.results import RANKABLE
    assert parse_plan({"horizon": 2, "rank_by": "rmsse_fold_mean"}).rank_by == "rmsse_fold_mean"
    assert {"rmsse", "rmsse_fold_mean"} <= set(RANK_SCORES) <= set(RANKABLE)


def test_short_windows_are_called_undefined_not_zero_and_counted():
    # Fold 0's window is shorter than m + 1: no seasonal difference, scale undefined (None);
    # fold 1 is constant: scale 0; fold 2 is usable.
    short = _fold([10] * 4, [9] * 4, L95, U95, None, 1.0, 0)
    flat = _fold([10] * 4, [9] * 4, L95, U95, 0.0, 1.0, 1)
    good = _fold([10] * 4, [8] * 4, L95, U95, 2.0, 1.0, 2)
    pooled = {s.metric: s for s in score_candidate("c1", [short, flat, good], 4, [95])
              if s.horizon is None and s.level is None}
    mase = pooled["mase"]
    assert mase.value == pytest.approx(1.0) and mase.count == 4
    assert mase.note == ("8 of 12 point(s) left out: 4 with an undefined training scale "
                         "(training window shorter than m + 1: no seasonal difference); "
                         "4 with a zero training scale")
    only_short = {s.metric: s for s in score_candidate("c1", [short], 4, [95])
                  if s.horizon is None and s.level is None}["mase"]
    assert only_short.value is None
    assert "undefined training scale" in only_short.note and "zero" not in only_short.note
