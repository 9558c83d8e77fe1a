"""Interval calibration tests against Kupiec (1995), Christoffersen (1998) and the Basel
Committee (1996).

Kupiec's LR_POF = -2 ln[(1-p)^(T-x) p^x] + 2 ln[(1-p_hat)^(T-x) p_hat^x] ~ chi2(1), and
Christoffersen's LR_ind on the transition counts n_ij ~ chi2(1); both formulas recalled. The
check values are computed with numpy 2.4.6 / scipy 1.17.1 from those formulas.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats

from backtest.assessment.calibration import (
    calibration_report,
    calibration_zone,
    christoffersen,
    kupiec_pof,
    zone_thresholds,
)

# Invented hit sequence: violations coded 1, T = 20, x = 5, nominal miss rate 0.10
VIOLATIONS = [0, 0, 1, 1, 0, 0, 0, 1, 0, 0, 0, 0, 0, 1, 1, 0, 0, 0, 0, 0]
HITS = [1 - v for v in VIOLATIONS]


@pytest.mark.parametrize(("trials", "misses", "rate", "lr", "p"), [
    (250, 8, 0.01, 7.733551, 0.005420),
    (250, 0, 0.01, 5.025168, 0.024982),
    (250, 2, 0.01, 0.108435, 0.741933),
    (250, 5, 0.01, 1.956810, 0.161855),
    (500, 10, 0.01, 3.913620, 0.047896),
    (20, 3, 0.10, 0.489405, 0.484193),
])
def test_kupiec_matches_reference_table(trials, misses, rate, lr, p):
    out = kupiec_pof(misses, trials, rate)
    assert out["lr"] == pytest.approx(lr, abs=1e-6)
    assert out["p_value"] == pytest.approx(p, abs=1e-6)


def test_kupiec_with_every_trial_a_miss_uses_zero_log_zero():
    out = kupiec_pof(10, 10, 0.1)
    assert out["lr"] == pytest.approx(-2 * 10 * np.log(0.1))


def test_kupiec_without_trials_is_undefined():
    assert kupiec_pof(0, 0, 0.05)["lr"] is None


def test_nominal_rate_outside_the_unit_interval_is_rejected():
    with pytest.raises(ValueError, match="nominal_miss_rate"):
        kupiec_pof(1, 10, 1.0)


def test_christoffersen_transitions_and_independence_match_reference():
    out = christoffersen(HITS, 0.10)
    assert out["transitions"] == {"hit_hit": 11, "hit_miss": 3, "miss_hit": 3, "miss_miss": 2}
    assert out["miss_after_hit"] == pytest.approx(0.214286, abs=1e-6)
    assert out["miss_after_miss"] == pytest.approx(0.4, abs=1e-12)
    assert out["miss_rate"] == pytest.approx(0.263158, abs=1e-6)
    assert out["lr_ind"] == pytest.approx(0.622345, abs=1e-6)
    assert out["p_value_ind"] == pytest.approx(0.430177, abs=1e-6)


def test_christoffersen_conditional_coverage_uses_the_t_minus_one_transitions():
    # Our documented choice: LR_cc is the paper's single ratio on the T - 1 transitions,
    # = LR_uc on observations 2..T (4.075249) + LR_ind, = 4.697593 (computed with
    # scipy 1.17.1).
    out = christoffersen(HITS, 0.10)
    assert out["uc_observations"] == 19
    assert out["lr_uc"] == pytest.approx(4.075249, abs=1e-6)
    assert out["lr_cc"] == pytest.approx(4.697593, abs=1e-6)
    assert out["lr_cc"] == pytest.approx(out["lr_uc"] + out["lr_ind"], abs=1e-12)
    assert out["p_value_cc"] == pytest.approx(stats.chi2.sf(4.697593, 2), abs=1e-6)
    assert out["lr_uc"] == pytest.approx(kupiec_pof(5, 19, 0.10)["lr"])


def test_the_alternative_with_kupiec_on_all_t_observations_gives_the_other_reference_value():
    # Computed with scipy 1.17.1: LR_uc on all 20 = 3.693261 (p 0.054633); + LR_ind =
    # 4.315605 (p 0.115579). Not what christoffersen() returns as lr_cc; kupiec_pof gives
    # the part.
    uc = kupiec_pof(5, 20, 0.10)
    assert uc["lr"] == pytest.approx(3.693261, abs=1e-6)
    assert uc["p_value"] == pytest.approx(0.054633, abs=1e-6)
    total = uc["lr"] + christoffersen(HITS, 0.10)["lr_ind"]
    assert total == pytest.approx(4.315605, abs=1e-6)
    assert stats.chi2.sf(total, 2) == pytest.approx(0.115579, abs=1e-6)


def test_christoffersen_is_invariant_to_coding_misses_as_one():
    direct = christoffersen(HITS, 0.10)
    flipped = christoffersen(VIOLATIONS, 0.90)
    for key in ("lr_uc", "lr_ind", "lr_cc"):
        assert flipped[key] == pytest.approx(direct[key], abs=1e-10)


def test_christoffersen_without_misses_has_no_dependence():
    out = christoffersen([1] * 30, 0.05)
    assert out["lr_ind"] == 0.0 and out["miss_after_miss"] is None
    assert out["lr_cc"] == pytest.approx(out["lr_uc"])


def test_christoffersen_rejects_values_other_than_zero_and_one():
    with pytest.raises(ValueError, match="hit_sequence"):
        christoffersen([0, 2, 1], 0.1)


def test_zone_boundaries_reproduce_the_basel_table_for_250_days_at_99_percent():
    # Basel Committee (1996), zone table: green 0-4, yellow 5-9, red 10+ exceptions
    # (recalled; the binomial boundaries below agree). Computed with scipy 1.17.1:
    # P(X<=4) = 0.892188, P(X<=5) = 0.958817, P(X<=9) = 0.999750, P(X<=10) = 0.999946,
    # X ~ Binomial(250, 0.01)
    cdf = stats.binom.cdf([4, 5, 9, 10], 250, 0.01)
    np.testing.assert_allclose(cdf, [0.892188, 0.958817, 0.999750, 0.999946], atol=1e-6)
    assert zone_thresholds(250, 0.01) == (5, 10)
    zones = [calibration_zone(k, 250, 0.01) for k in range(13)]
    assert zones == ["consistent"] * 5 + ["suspect"] * 5 + ["excessive"] * 3


def test_zone_without_trials_is_none():
    assert calibration_zone(0, 0, 0.05) is None


def _report_inputs():
    actuals = np.array([[0.0, 0.0], [5.0, 0.0], [0.0, 5.0], [0.0, np.nan],
                        [-5.0, 0.0], [0.0, 1.0]])
    lower = {80: np.full((6, 2), -1.0), 95: np.full((6, 2), -2.0)}
    upper = {80: np.full((6, 2), 1.0), 95: np.full((6, 2), 2.0)}
    return actuals, lower, upper


def test_calibration_report_counts_hits_and_misses_per_horizon_and_pooled():
    actuals, lower, upper = _report_inputs()
    (level80, level95) = calibration_report(actuals, lower, upper, [80, 95])
    h1, h2 = level80["by_horizon"]
    assert (h1["trials"], h1["hits"], h1["misses"]) == (6, 4, 2)
    assert (h2["trials"], h2["hits"], h2["misses"]) == (5, 4, 1)  # NaN cell left out
    assert h2["coverage"] == pytest.approx(0.8)
    assert h1["kupiec"] == kupiec_pof(2, 6, 0.2)
    assert h1["christoffersen"] == christoffersen([1, 0, 1, 1, 0, 1], 0.2)
    pooled = level80["pooled"]
    assert (pooled["trials"], pooled["misses"]) == (11, 3)
    assert pooled["christoffersen"] is None and pooled["formal"] is False
    assert level95["nominal_coverage"] == 0.95
    assert level95["by_horizon"][0]["kupiec"]["nominal_miss_rate"] == 0.05
    json.dumps([level80, level95], allow_nan=False)


def test_only_non_overlapping_horizons_are_formal():
    actuals, lower, upper = _report_inputs()
    (daily,) = calibration_report(actuals, lower, upper, [80])
    assert [h["formal"] for h in daily["by_horizon"]] == [True, False]
    assert "overlapping" in daily["by_horizon"][1]["note"]
    (spaced,) = calibration_report(actuals, lower, upper, [80], origin_step=2)
    assert [h["formal"] for h in spaced["by_horizon"]] == [True, True]


def test_bounds_must_match_the_actuals():
    actuals, lower, upper = _report_inputs()
    with pytest.raises(ValueError, match="lower"):
        calibration_report(actuals, {80: lower[80][:3]}, upper, [80])
    with pytest.raises(ValueError, match="level 90"):
        calibration_report(actuals, lower, upper, [90])
