"""Residual diagnostics against the published formulas (Ljung & Box 1978; Jarque & Bera 1980;
Engle 1982), statsmodels, and slow loop implementations.

Check values are computed with numpy 2.4.6 / scipy 1.17.1 / statsmodels 0.15.0 from those
formulas on invented residuals: they show the formula as written gives the number, not that
it matches the paper (the formulas are recalled).
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.diagnostic import acorr_ljungbox, het_arch
from statsmodels.tsa.stattools import pacf

from backtest.assessment.residual_tests import (
    acf_report,
    arch_lm,
    default_lags,
    jarque_bera,
    ljung_box,
    partial_autocorrelations,
)

# Invented residuals used by every check value here (n = 24)
X = np.array([0.5, -1.2, 0.8, 1.9, -0.4, -2.1, 0.3, 1.1, -0.7, 0.2, 1.5, -1.8, 0.9, -0.3, -1.0,
              2.2, 0.1, -0.6, 1.3, -1.4, 0.7, -0.2, 1.0, -0.9])


def _slow_acf(x, k):
    mean = sum(x) / len(x)
    num = sum((x[t] - mean) * (x[t - k] - mean) for t in range(k, len(x)))
    return num / sum((v - mean) ** 2 for v in x)


def test_ljung_box_matches_reference_q_and_p_values():
    # Ljung & Box (1978), Q(L) = n(n+2) sum r_k^2 / (n-k); computed with statsmodels 0.15.0
    # acorr_ljungbox: Q(6) = 10.116759, p = 0.119820 (df 6), p = 0.038506 (df 4, model_df 2)
    (plain,) = ljung_box(X, [6], model_df=0)
    (arma,) = ljung_box(X, [6], model_df=2)
    assert plain["q"] == pytest.approx(10.116759, abs=1e-6)
    assert plain["p_value"] == pytest.approx(0.119820, abs=1e-6)
    assert arma["q"] == plain["q"]
    assert (arma["df"], arma["p_value"]) == (4, pytest.approx(0.038506, abs=1e-6))


def test_ljung_box_agrees_with_statsmodels_and_a_slow_loop():
    lags = [1, 3, 6, 10]
    ours = ljung_box(X, lags, model_df=0)
    reference = acorr_ljungbox(X, lags=lags)
    np.testing.assert_allclose([r["q"] for r in ours], reference["lb_stat"], rtol=1e-12)
    n = len(X)
    slow = n * (n + 2) * sum(_slow_acf(list(X), k) ** 2 / (n - k) for k in range(1, 11))
    assert ours[-1]["q"] == pytest.approx(slow, rel=1e-12)


def test_ljung_box_without_degrees_of_freedom_reports_q_but_no_p_value():
    (row,) = ljung_box(X, [4], model_df=5)
    assert row["q"] is not None and row["df"] == -1
    assert row["p_value"] is None and "no degrees of freedom" in row["reason"]


def test_ljung_box_lag_beyond_the_sample_is_undefined():
    (row,) = ljung_box(X[:5], [12], model_df=0)
    assert row["q"] is None and "lag 12" in row["reason"]


def test_ljung_box_of_constant_residuals_is_undefined():
    (row,) = ljung_box(np.ones(30), [5], model_df=0)
    assert row["q"] is None and "constant" in row["reason"]


def test_numpy_list_and_pandas_inputs_agree():
    assert ljung_box(X, [6], 2) == ljung_box(list(X), [6], 2) == ljung_box(pd.Series(X), [6], 2)
    assert jarque_bera(pd.Series(X)) == jarque_bera(X)


def test_nan_residuals_are_rejected_naming_the_argument():
    with pytest.raises(ValueError, match="resid"):
        ljung_box(np.array([1.0, np.nan, 2.0]), [1], 0)


def test_jarque_bera_matches_reference():
    # Jarque & Bera (1980), JB = n/6 [S^2 + (K-3)^2/4]; computed with scipy 1.17.1
    # stats.jarque_bera: S = -0.060793, K = 2.169847, JB = 0.703937, p = 0.703302
    out = jarque_bera(X)
    assert out["skewness"] == pytest.approx(-0.060793, abs=1e-6)
    assert out["kurtosis"] == pytest.approx(2.169847, abs=1e-6)
    assert out["statistic"] == pytest.approx(0.703937, abs=1e-6)
    assert out["p_value"] == pytest.approx(0.703302, abs=1e-6)


def test_jarque_bera_of_constant_residuals_is_undefined():
    assert jarque_bera(np.zeros(10))["statistic"] is None


@pytest.mark.parametrize(("q", "lm", "lm_p", "f", "f_p"), [
    (1, 1.978844, 0.159512, 1.976852, 0.174347),
    (2, 2.543950, 0.280278, 1.242160, 0.311174),
])
def test_arch_lm_matches_reference(q, lm, lm_p, f, f_p):
    # Engle (1982), LM = (n-q) R^2; computed with statsmodels 0.15.0 het_arch and a manual
    # OLS, which agree
    out = arch_lm(X, q)
    assert out["n_used"] == 24 - q
    assert out["lm"] == pytest.approx(lm, abs=1e-6)
    assert out["lm_p_value"] == pytest.approx(lm_p, abs=1e-6)
    assert out["f"] == pytest.approx(f, abs=1e-6)
    assert out["f_p_value"] == pytest.approx(f_p, abs=1e-6)


def test_arch_lm_agrees_with_statsmodels_het_arch():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)  # het_arch's return-type notice
        lm, lm_p, f, f_p = het_arch(X, nlags=3)[:4]
    out = arch_lm(X, 3)
    np.testing.assert_allclose([out["lm"], out["lm_p_value"], out["f"], out["f_p_value"]],
                               [lm, lm_p, f, f_p], rtol=1e-10)


def test_arch_lm_emits_no_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        arch_lm(X, 2)


def test_arch_lm_with_too_many_lags_is_undefined():
    assert arch_lm(X[:6], 3)["lm"] is None


def test_acf_report_matches_reference_autocorrelations():
    # Sample ACF r1..r6 (demeaned, divisor n), computed with statsmodels 0.15.0 acf
    out = acf_report(X, 6)
    expected = [-0.396638, -0.269024, 0.267735, -0.146190, -0.045758, 0.163809]
    np.testing.assert_allclose(out["acf"], expected, atol=1e-6)
    assert out["bound"] == pytest.approx(1.96 / np.sqrt(24))
    assert out["acf_outside"] == []  # |r1| = 0.3966 < 0.4001


def test_acf_report_pacf_matches_statsmodels_levinson_durbin():
    out = acf_report(X, 8)
    np.testing.assert_allclose(out["pacf"], pacf(X, nlags=8, method="ldb")[1:], atol=1e-12)
    assert out["pacf_outside"] == [k + 1 for k, v in enumerate(out["pacf"])
                                   if abs(v) > out["bound"]]
    assert out["pacf_outside"] == [2]


def test_partial_autocorrelations_of_an_ar1_acf_cut_off_after_lag_one():
    r = 0.6 ** np.arange(1, 6)
    np.testing.assert_allclose(partial_autocorrelations(r), [0.6, 0, 0, 0, 0], atol=1e-12)


def test_acf_report_caps_lags_at_n_minus_one():
    assert acf_report(X[:5], 10)["nlags"] == 4


@pytest.mark.parametrize(("m", "lags"), [(12, [12, 24]), (4, [4, 8]), (1, [10])])
def test_default_lags(m, lags):
    assert default_lags(m) == lags
