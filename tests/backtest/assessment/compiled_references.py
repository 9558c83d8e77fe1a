"""statsmodels 0.15.0 references at given parameters for what the compiled likelihood gives a
fast fit (covariance, one-step errors, log-likelihood), shared by the fold-summary and the
full-report tests. Why each reference is the one to compare with, and to what tolerance:
``tests/backtest/assessment/test_compiled_fit.py``."""

from __future__ import annotations

import contextlib
import warnings

import numpy as np
from statsmodels.tools.numdiff import approx_hess3
from statsmodels.tsa.arima.model import ARIMA

from backtest.models.arima import ArimaSpec
from backtest.models.base import Fit

#: ARIMA against the exact likelihood of the differences, additive-error ETS (1e-6).
EXACT = 1e-6
#: Multiplicative-error ETS against real central differences of statsmodels' likelihood.
MULTIPLICATIVE = 1e-4


def generated_arma(n: int, phi: float, theta: float, mean: float, seed: int) -> np.ndarray:
    """An invented ARMA(1,1) path around ``mean`` (deterministic)."""
    e = np.random.default_rng(seed).normal(size=n + 50)
    x = np.zeros(n + 50)
    for t in range(1, n + 50):
        x[t] = phi * x[t - 1] + e[t] + theta * e[t - 1]
    return mean + x[50:]


def invented_monthly(n: int, seed: int) -> np.ndarray:
    """An invented positive monthly series (deterministic): on the log scale a level with
    a trend, a seasonal pattern, a random walk and noise."""
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    season = rng.normal(0, 0.12, 12)
    log_values = (4 + 0.008 * t + season[t % 12] + np.cumsum(rng.normal(0, 0.02, n))
                  + rng.normal(0, 0.03, n))
    return np.exp(log_values)


def fast(spec, y, m=12):
    """The fast estimate without statsmodels' results, as the fold summary gets it."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = spec.fit(y, m, estimator="fast", keep_raw=False)
    assert fit.raw is None and fit.params["estimator"] == 1.0
    return spec.assessed(fit)[1]


def square_roots(variances):
    """Standard errors, NaN where a variance is not positive (at a bound)."""
    variances = np.asarray(variances, dtype=float)
    return np.where(variances > 0, np.sqrt(np.abs(variances)), np.nan)


def arima_on_differences(spec: ArimaSpec, y, params, m=12):
    """statsmodels' ARIMA on the differenced series, the constant or drift as a regression
    on the differenced regressor (1 or t): the exact likelihood the compiled one computes,
    where the reference path starts the differenced states approximately diffuse."""
    _, d, _ = spec.order
    big_p, big_d, big_q = spec.seasonal or (0, 0, 0)
    w, x = np.asarray(y, dtype=float), np.arange(len(y), dtype=float)
    for _ in range(d):
        w, x = np.diff(w), np.diff(x)
    for _ in range(big_d):
        w, x = w[m:] - w[:-m], x[m:] - x[:-m]
    if spec.deterministic == "constant":
        x = np.ones_like(w)
    exog = None if spec.deterministic == "none" else x
    seasonal = (big_p, 0, big_q, m) if spec.seasonal else (0, 0, 0, 0)
    model = ARIMA(w, exog=exog, order=(spec.order[0], 0, spec.order[2]),
                  seasonal_order=seasonal, trend="n")
    return model.filter([params[n] for n in params])


def ets_fixed_season(spec, y, params, names, m=12):
    """statsmodels' results at ``params`` with the parameters not in ``names`` (the last
    seasonal state, fixed while estimating) fixed, and its standard errors by name."""
    model = spec.model(y, m)
    vector = [params[n] for n in model.param_names]
    fixed = {n: params[n] for n in model.param_names if n not in names}
    with model.fix_params(fixed) if fixed else contextlib.nullcontext():
        results = model.smooth(vector)
    return dict(zip(model.param_names, square_roots(np.diag(results.cov_params_approx))))


def ets_real_differences(spec, y, params, names, m=12):
    """Standard errors of ``names`` from statsmodels' ETS log-likelihood differentiated by
    real central differences (``approx_hess3``), Richardson-extrapolated over steps 5e-4
    and 2.5e-4 of max(|x|, 0.1); the other parameters held at ``params``."""
    model = spec.model(y, m)
    x = np.array([params[n] for n in names])
    full = np.array([params[n] for n in model.param_names])

    def loglike(v):
        return model.loglike(np.concatenate([v, full[len(v):]]))

    step = 5e-4 * np.maximum(np.abs(x), 0.1)
    hessian = (4 * approx_hess3(x, loglike, epsilon=step / 2)
               - approx_hess3(x, loglike, epsilon=step)) / 3
    return dict(zip(names, square_roots(np.diag(-np.linalg.pinv(hessian, rcond=1e-15)))))


def reference_path_fit(spec, y, params, m=12) -> Fit:
    """The fit at ``params`` with the results object the reference path's report reads:
    statsmodels' ARIMA filter pass or ETS smoothing pass (what ``keep_raw`` builds)."""
    if isinstance(spec, ArimaSpec):
        return Fit(params, spec.results_at(y, m, params))
    return Fit(params, spec.model(y, m).smooth([params[n] for n in params]))
