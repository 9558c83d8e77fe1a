"""Fold summaries from the compiled likelihoods against statsmodels at the same parameters.

Every reference below is computed with statsmodels 0.15.0 in this process, at the
parameters the fast estimator found (so no check depends on where an optimiser stops).
Tolerances, by the difference method of each side:

- ARIMA: our Hessian takes Richardson-extrapolated central differences of the filter's
  sums (truncation ~h^4, rounding ~eps/h^2 with h = eps^(1/4): ~1e-8 relative);
  statsmodels' complex-step Hessian is good to ~1e-7 away from a unit root. The reference
  path's ARIMA starts the differenced states approximately diffuse, which moves standard
  errors by up to ~5e-4 relative on short windows; the exact comparison is therefore with
  SARIMAX on the differenced data (``simple_differencing=True``) or ARIMA on
  differences, whose likelihood is ours exactly: 1e-6.
- ETS, additive error: differences of the exact gradient (~1e-10) against statsmodels'
  complex step (~1e-8): 1e-6. The last initial seasonal state, fixed while estimating, is
  fixed in statsmodels too (its ``fix_params``), else its Hessian is singular along the
  level-and-season direction and its covariance is noise.
- ETS, multiplicative error: statsmodels' log-likelihood passes ``log|yhat|`` through
  ``np.abs``, which drops the complex step's imaginary part, so its ``cov_params_approx``
  misses that term's curvature. The reference there is its log-likelihood differentiated
  by real central differences (statsmodels' ``approx_hess3``), Richardson-extrapolated
  over steps 5e-4 and 2.5e-4 of max(|x|, 0.1) (truncation ~1e-5 on damped classes): 1e-4.
- Ljung-Box p-values: the one-step errors are the same numbers up to rounding (ARIMA: up
  to the reference path's approximate diffuse start, ~1e-7 relative): 1e-6.
"""

from __future__ import annotations

import numpy as np
import pytest
from statsmodels.tsa.arima.model import ARIMA
from statsmodels.tsa.statespace.sarimax import SARIMAX

from backtest.assessment import compiled_fit
from backtest.assessment.fit_report import fold_fit_summary
from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.models.arima import ArimaSpec
from backtest.models.base import Fit
from backtest.models.ets import EtsSpec
from backtest.plan import parse_plan
from tests.backtest.assessment.compiled_references import (
    EXACT,
    MULTIPLICATIVE,
    ets_fixed_season,
    ets_real_differences,
    fast,
    generated_arma,
    square_roots,
)


def _compiled_se(spec, fit, y, m=12):
    variances, _ = compiled_fit.variances(spec, fit, y, m)
    return dict(zip(fit.params, square_roots(variances)))


def _reference_se(results, names):
    return dict(zip(names, square_roots(np.diag(results.cov_params_approx))))


def test_airline_standard_errors_are_statsmodels_on_the_differenced_data(log_air):
    spec = ArimaSpec((0, 1, 1), (0, 1, 1), 12)
    fit = fast(spec, log_air)
    ours = _compiled_se(spec, fit, log_air)
    params = [fit.params[n] for n in ("ma.L1", "ma.S.L12", "sigma2")]
    exact = SARIMAX(log_air, order=(0, 1, 1), seasonal_order=(0, 1, 1, 12),
                    simple_differencing=True).filter(params)
    for name, value in _reference_se(exact, ["ma.L1", "ma.S.L12", "sigma2"]).items():
        assert ours[name] == pytest.approx(value, rel=EXACT), name
    # the reference path (approximately diffuse start) agrees to its own start's precision
    approx = _reference_se(spec.results_at(log_air, 12, fit.params), list(fit.params))
    for name, value in approx.items():
        assert ours[name] == pytest.approx(value, rel=1e-3), name


@pytest.mark.parametrize(("seed", "phi", "theta", "mean"),
                         [(3, 0.6, 0.3, 10.0), (11, -0.4, 0.5, -2.0), (29, 0.85, -0.2, 50.0)])
def test_arma_with_a_constant_is_statsmodels_exactly(seed, phi, theta, mean):
    y = generated_arma(160, phi, theta, mean, seed)
    spec = ArimaSpec((1, 0, 1), None, None, "constant")
    fit = fast(spec, y)
    ours = _compiled_se(spec, fit, y)
    reference = ARIMA(y, order=(1, 0, 1), trend="c").filter(
        [fit.params[n] for n in ("constant", "ar.L1", "ma.L1", "sigma2")])
    for name, value in zip(fit.params, square_roots(np.diag(reference.cov_params_approx))):
        assert ours[name] == pytest.approx(value, rel=EXACT), name


def test_drift_is_the_mean_of_the_differences_in_statsmodels():
    y = np.cumsum(generated_arma(150, 0.5, 0.4, 0.3, 5))
    spec = ArimaSpec((1, 1, 1), None, None, "drift")
    fit = fast(spec, y)
    ours = _compiled_se(spec, fit, y)
    reference = ARIMA(np.diff(y), order=(1, 0, 1), trend="c").filter(
        [fit.params[n] for n in ("drift", "ar.L1", "ma.L1", "sigma2")])
    for name, value in zip(fit.params, square_roots(np.diag(reference.cov_params_approx))):
        assert ours[name] == pytest.approx(value, rel=EXACT), name


@pytest.mark.parametrize("spec", [ArimaSpec((0, 1, 1), (0, 1, 1), 12),
                                  ArimaSpec((2, 1, 0), None, None, "drift"),
                                  EtsSpec(trend="additive", season="additive"),
                                  EtsSpec(error="multiplicative", trend="damped")])
def test_ljung_box_p_values_are_the_reference_paths(series_g, spec):
    y = series_g.iloc[:, 1].to_numpy(float)
    y = np.log(y) if spec.family == "arima" else y
    fit = fast(spec, y[:96])
    raw = (spec.results_at(y[:96], 12, fit.params) if spec.family == "arima"
           else spec.model(y[:96], 12).smooth([fit.params[n] for n in fit.params]))
    ours = fold_fit_summary(spec, fit, y[:96], 12)["ljung_box"]
    reference = fold_fit_summary(spec, Fit(fit.params, raw), y[:96], 12)["ljung_box"]
    assert ours["lag"] == reference["lag"] == 12
    assert ours["p_value"] == pytest.approx(reference["p_value"], rel=EXACT)
    assert "compiled" in ours["source"] and "compiled" not in reference["source"]


@pytest.mark.parametrize(("spec", "window"), [
    (EtsSpec(), slice(0, 72)), (EtsSpec(trend="damped"), slice(24, 96)),
    (EtsSpec(trend="additive", season="additive"), slice(0, 96)),
    (EtsSpec(trend="damped", season="additive"), slice(36, 144))])
def test_additive_error_ets_standard_errors_are_statsmodels(log_air, spec, window):
    y = log_air[window]
    fit = fast(spec, y)
    ours = _compiled_se(spec, fit, y)
    variances, fixed = compiled_fit.variances(spec, fit, y, 12)
    names = [n for n in fit.params if n not in fixed]
    reference = ets_fixed_season(spec, y, fit.params, names)
    compared = 0
    for name in names:
        if np.isfinite(reference[name]):  # statsmodels' variance is negative at a bound
            assert ours[name] == pytest.approx(reference[name], rel=EXACT), name
            compared += 1
        else:
            assert not np.isfinite(ours[name]), name
    assert compared >= 2
    assert set(fixed) == ({"initial_seasonal.11"} if spec.season != "none" else set())


@pytest.mark.parametrize("spec", [
    EtsSpec(error="multiplicative"), EtsSpec(error="multiplicative", trend="damped"),
    EtsSpec(error="multiplicative", trend="additive", season="multiplicative")])
def test_multiplicative_error_ets_hessian_is_statsmodels_likelihoods(series_g, spec):
    y = series_g.iloc[:72, 1].to_numpy(float)
    fit = fast(spec, y)
    ours = _compiled_se(spec, fit, y)
    variances, fixed = compiled_fit.variances(spec, fit, y, 12)
    names = [n for n in fit.params if n not in fixed]
    reference = ets_real_differences(spec, y, fit.params, names)
    finite = [name for name in names if np.isfinite(reference[name])]
    assert len(finite) >= 2
    for name in finite:
        assert ours[name] == pytest.approx(reference[name], rel=MULTIPLICATIVE), name


def test_summary_has_the_reference_structure_and_says_how(log_air):
    spec = ArimaSpec((1, 1, 0), (0, 1, 1), 12)
    fit = fast(spec, log_air[:84])
    ours = fold_fit_summary(spec, fit, log_air[:84], 12)
    reference = fold_fit_summary(spec, Fit(fit.params, spec.results_at(log_air[:84], 12,
                                                                       fit.params)),
                                 log_air[:84], 12)
    assert set(ours) == set(reference)
    assert set(ours["ljung_box"]) == set(reference["ljung_box"])
    assert list(ours["params"]) == list(reference["params"])
    assert ours["converged"] is True and ours["warnings"] == []
    assert ours["covariance"]["description"] == compiled_fit.DESCRIPTION
    assert "complex-step" in reference["covariance"]["description"]


def test_a_fast_run_summarises_from_the_compiled_likelihood_a_reference_run_does_not():
    candidates = parse_candidates([
        {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
         "transform": "log"},
        {"family": "ets", "error": "additive", "trend": "damped", "season": "none"}])
    descriptions = {}
    for estimator in ("fast", "reference"):
        plan = parse_plan({"horizon": 3, "max_origins": 3, "refit": 1, "seed": 7,
                           "estimator": estimator})
        body = run_backtest(demo_series()[:1], candidates, plan).to_dict()
        summaries = [f["fit_summary"] for f in body["series"][0]["folds"]
                     if f["fit_summary"] is not None]
        assert len(summaries) == 6
        assert all(s["params"] and s["ljung_box"]["p_value"] is not None for s in summaries)
        descriptions[estimator] = {s["covariance"]["description"] for s in summaries}
    assert descriptions["fast"] == {compiled_fit.DESCRIPTION}
    assert compiled_fit.DESCRIPTION not in descriptions["reference"]
