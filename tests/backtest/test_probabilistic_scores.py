"""CRPS and pinball loss against their definitions, closed forms and numerical integration.

References:
- CRPS(F, y) = integral (F(x) - 1{x >= y})^2 dx (Matheson & Winkler 1976; Gneiting &
  Raftery 2007, eq. 20), integrated here with scipy.integrate.quad (computed with the
  installed scipy);
- the closed form for a normal (Gneiting & Raftery 2007, eq. 5);
- the pinball loss (Koenker & Bassett 1978), worked by hand below, and its relation to the
  interval score, IS = (2/a)(rho_{a/2}(l) + rho_{1-a/2}(u)) (Gneiting & Raftery 2007,
  section 6.2).
"""

import dataclasses

import numpy as np
import pytest
from scipy import integrate, stats

from backtest import metrics
from backtest.candidates import parse_candidate, parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.predictive import Predictive, crps_by_fold, predictive_of
from backtest.results import FoldResult
from backtest.scoring import score_candidate
from backtest.transforms import Transform


def _crps_by_integration(cdf, y: float, low: float, high: float) -> float:
    """Integral of (F(x) - 1{x >= y})^2 over [low, high], split at y."""
    left = integrate.quad(lambda x: cdf(x) ** 2, low, y, limit=200)[0]
    right = integrate.quad(lambda x: (1.0 - cdf(x)) ** 2, y, high, limit=200)[0]
    return left + right


def test_crps_of_a_standard_normal_at_its_mean():
    # Gneiting & Raftery (2007), eq. 5 at z = 0: 2 phi(0) - 1/sqrt(pi) = 0.233695 (recalled)
    assert metrics.crps_normal(0.0, 1.0, 0.0) == pytest.approx(0.2336950, abs=1e-7)


@pytest.mark.parametrize(("mu", "sd", "y"), [(0, 1, 0.3), (10, 2.5, 4.0), (-3, 0.4, -2.1)])
def test_crps_normal_equals_numerical_integration(mu, sd, y):
    expected = _crps_by_integration(stats.norm(mu, sd).cdf, y, mu - 12 * sd, mu + 12 * sd)
    assert metrics.crps_normal(mu, sd, y) == pytest.approx(expected, rel=1e-7)


def test_crps_normal_without_spread_is_the_absolute_error():
    np.testing.assert_allclose(metrics.crps_normal([5.0, 5.0], [0.0, 0.0], [7.0, 2.0]), [2, 3])


def test_crps_from_a_quantile_grid_of_a_normal_matches_the_closed_form():
    taus = (np.arange(1000) + 0.5) / 1000
    quantiles = stats.norm.ppf(taus, loc=2.0, scale=1.5)
    approx = metrics.crps_quantiles(quantiles, 3.1)
    assert approx == pytest.approx(float(metrics.crps_normal(2.0, 1.5, 3.1)), rel=2e-3)


def test_crps_of_a_sample_worked_by_hand():
    # sample {1, 2, 4}, y = 3: E|X - y| = 4/3, E|X - X'| = 4/3, CRPS = 4/3 - 2/3 = 2/3;
    # by the integral of the step CDF: 1/9 + 4/9 + 1/9 = 2/3
    assert metrics.crps_sample(np.array([4.0, 1.0, 2.0]), 3.0) == pytest.approx(2 / 3)


def test_crps_of_a_large_normal_sample_approaches_the_closed_form():
    sample = np.random.default_rng(4).normal(1.0, 2.0, 200_000)
    assert metrics.crps_sample(sample, 2.5) == pytest.approx(
        float(metrics.crps_normal(1.0, 2.0, 2.5)), rel=1e-2)


def test_pinball_loss_worked_by_hand():
    # quantile forecast 10: actual 13 at tau 0.9 -> 0.9 * 3 = 2.7; actual 7 -> 0.1 * 3 = 0.3;
    # at tau 0.1 the roles swap: 0.3 and 2.7
    np.testing.assert_allclose(metrics.pinball(10.0, np.array([13.0, 7.0]), 0.9), [2.7, 0.3])
    np.testing.assert_allclose(metrics.pinball(10.0, np.array([13.0, 7.0]), 0.1), [0.3, 2.7])


def test_pinball_at_the_interval_quantiles_is_the_interval_score_rescaled():
    lower, upper = np.array([14, 18, 21, 18.5]), np.array([18, 21, 24, 22])
    actual = np.array([16, 20, 25, 18.0])
    a = 0.05
    total = metrics.pinball(lower, actual, a / 2) + metrics.pinball(upper, actual, 1 - a / 2)
    np.testing.assert_allclose(2 / a * total, metrics.interval_score(lower, upper, actual, 95))


def _fold(actual, point, lower, upper, *, number=0, scale=2.0):
    return FoldResult("s", "c1", number, "o", "t", 12, True, "ok", None, {}, (),
                      ("a",) * len(actual), tuple(actual), tuple(point),
                      {lv: tuple(b) for lv, b in lower.items()},
                      {lv: tuple(b) for lv, b in upper.items()}, scale, 1.0)


def test_scores_per_level_pooled_and_scaled_on_a_hand_worked_fold():
    # one fold, h = 1..2, levels 80 (tau 0.1, 0.9) and 50 (tau 0.25, 0.75)
    fold = _fold([13.0, 7.0], [10.0, 10.0], {80: [8, 8], 50: [9, 9]}, {80: [12, 12], 50: [11, 11]})
    scores = {(s.metric, s.horizon, s.level): s.value
              for s in score_candidate("c1", [fold], 2, [50, 80])}
    # h = 1, y = 13. 80 %: rho_0.1(8) = 0.1 * 5 = 0.5, rho_0.9(12) = 0.9 * 1 = 0.9 -> 0.7
    #                50 %: rho_0.25(9) = 0.25 * 4 = 1.0, rho_0.75(11) = 0.75 * 2 = 1.5 -> 1.25
    assert scores["pinball", 1, 80] == pytest.approx(0.7)
    assert scores["pinball", 1, 50] == pytest.approx(1.25)
    # h = 2, y = 7. 80 %: rho_0.1(8) = 0.9 * 1 = 0.9, rho_0.9(12) = 0.1 * 5 = 0.5 -> 0.7
    #                50 %: rho_0.25(9) = 0.75 * 2 = 1.5, rho_0.75(11) = 0.25 * 4 = 1.0 -> 1.25
    assert scores["pinball", None, None] == pytest.approx((0.7 + 1.25) / 2)
    assert scores["scaled_pinball", None, None] == pytest.approx((0.7 + 1.25) / 2 / 2.0)
    # Gaussian on the original scale: sd from the 50 % bounds, (11 - 9) / (2 z_0.75)
    sd = 2 / (2 * stats.norm.ppf(0.75))
    assert scores["crps", 1, None] == pytest.approx(float(metrics.crps_normal(10, sd, 13)))


def test_crps_of_a_log_model_is_that_of_the_lognormal_on_the_original_scale():
    mu, sd, y = np.log(100.0), 0.3, 140.0
    z = stats.norm.ppf(0.9)
    fold = _fold([y], [np.exp(mu)], {80: [np.exp(mu - z * sd)]}, {80: [np.exp(mu + z * sd)]})
    crps, note = crps_by_fold([fold], Predictive(Transform("log")), [80])
    lognormal = stats.lognorm(s=sd, scale=np.exp(mu))
    expected = _crps_by_integration(lognormal.cdf, y, 0.0, lognormal.ppf(1 - 1e-12))
    assert note is None
    assert crps[0, 0] == pytest.approx(expected, rel=1e-3)
    # the Gaussian closed form with the same bounds would be a different (wrong) number
    gaussian = crps_by_fold([fold], Predictive(), [80])[0][0, 0]
    assert abs(gaussian - expected) > 1e-2 * expected


def test_simulated_intervals_score_the_crps_of_their_sample_or_say_why_not():
    spec = parse_candidate({"family": "ets", "error": "multiplicative"})
    fold = _fold([13.0], [10.0], {80: [8]}, {80: [12]})
    scores = {(s.metric, s.level): s for s in score_candidate(
        "c1", [fold], 1, [80], predictive=predictive_of(spec, 1)) if s.horizon is None}
    assert scores["crps", None].value is None  # a fold without its sample's CRPS
    assert "simulated" in scores["crps", None].note
    assert scores["pinball", None].value == pytest.approx(0.7)
    sampled = dataclasses.replace(fold, sample_crps=(1.25,))
    scores = {(s.metric, s.level): s for s in score_candidate(
        "c1", [sampled], 1, [80], predictive=predictive_of(spec, 1)) if s.horizon is None}
    assert scores["crps", None].value == pytest.approx(1.25) and scores["crps", None].note is None


def _ets_sample(seed: int) -> tuple[object, np.ndarray]:
    """A multiplicative ETS forecast, 3 steps from 84 months of the demo's first series."""
    spec = parse_candidate({"family": "ets", "error": "multiplicative", "trend": "additive",
                            "season": "multiplicative"}).spec
    y = np.asarray(demo_series()[0].values[:84], dtype=float)
    fit = spec.fit(y, 12)
    return spec.forecast(y, 12, fit.params, 3, (80, 95), seed), y


def test_the_sample_crps_of_simulated_paths_equals_the_integral_of_their_empirical_cdf():
    """CRPS of the empirical distribution of an ETS(M,A,M) forecast's 1,000 simulated
    values: the sorted-sample estimator (Gneiting & Raftery 2007, eq. 21) against
    scipy.integrate.quad of (F_n(x) - 1{x >= y})^2, F_n the sample's empirical CDF
    (computed with the installed scipy)."""
    forecast, _ = _ets_sample(11)
    assert forecast.sample.shape == (3, 1000)
    for h in range(3):  # the bounds are the sample's quantiles
        assert forecast.lower[80][h] == pytest.approx(np.quantile(forecast.sample[h], 0.1))
        assert forecast.upper[95][h] == pytest.approx(np.quantile(forecast.sample[h], 0.975))
    x = np.sort(forecast.sample[0])
    y = float(np.median(x) + 1.5 * (x[-1] - x[0]) / 10)

    def ecdf(v: float) -> float:
        return np.searchsorted(x, v, side="right") / len(x)

    left = integrate.quad(lambda v: ecdf(v) ** 2, x[0], y, points=x[x < y], limit=3000)[0]
    right = integrate.quad(lambda v: (1 - ecdf(v)) ** 2, y, x[-1], points=x[x > y],
                           limit=3000)[0]
    assert metrics.crps_sample(x, y) == pytest.approx(left + right, rel=1e-6)


def test_a_backtest_ranks_by_crps_with_simulated_intervals_scored_from_their_sample():
    series = demo_series()[:1]
    plan = parse_plan({"horizon": 3, "max_origins": 30, "rank_by": "crps", "levels": [80, 95]})
    candidates = parse_candidates([
        {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
         "transform": "log"},
        {"family": "benchmark", "method": "seasonal_naive",
         "intervals": {"kind": "empirical", "min_errors": 10}},
        {"family": "ets", "error": "multiplicative", "season": "multiplicative"},
    ])
    sr = run_backtest(series, candidates, plan).series[0]
    pooled = {s.candidate_id: s for s in sr.scores
              if s.metric == "crps" and s.horizon is None and s.level is None}
    ranked = [row for row in sr.ranking if row.rank is not None]
    assert [row.score for row in ranked] == sorted(pooled[r.candidate_id].value for r in ranked)
    ets = next(row for row in sr.ranking if row.label.startswith("ETS(M"))
    assert ets.rank is not None and pooled[ets.candidate_id].note is None
    folds = [f for f in sr.folds if f.candidate_id == ets.candidate_id and f.status == "ok"]
    assert all(f.sample_crps is not None and len(f.sample_crps) == 3 for f in folds)
    # the pooled score is the mean of the folds' sample CRPS (all folds are common here)
    assert ets.common_folds == len(folds)
    assert pooled[ets.candidate_id].value == pytest.approx(
        np.mean([f.sample_crps for f in folds]))
    assert not sr.evidence["confidence_set"].get("without_loss")
    assert len(ranked) == 4  # the plan's benchmark is added
    assert all(pooled[r.candidate_id].note is None for r in ranked)
