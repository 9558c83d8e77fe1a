"""One order of an ARIMA search fitted by the fast estimator, judged like the reference.

The optimiser stops at the search's precision (the criterion within about 1e-8 of a
strict stop's; :data:`~.fast_arima.SEARCH_FTOL`), still far tighter than the
reference's own stopping rule.

The verdicts are those of :mod:`.arima_trial`: rejected when the estimate fails, when the
criterion is not finite, or when an AR or MA factor has an inverse root above
:data:`~.arima_trial.MAX_INVERSE_ROOT`. The criteria are statsmodels' (``aic``, ``aicc``,
``bic`` over the effective sample ``n - d - D s`` with every parameter counted, the
innovation variance included). Where the fast estimator fails or does not converge, the
order is fitted by the reference trial instead and the fallback is among its warnings.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from backtest.models.arima import ArimaSpec
from backtest.models.arima_trial import (
    MAX_INVERSE_ROOT,
    Criterion,
    Trial,
    largest_inverse_root,
    run_trial,
)
from backtest.models.base import Params
from backtest.models.fast_arima import FastFit, fast_estimate
from backtest.models.fast_fallback import (
    ESTIMATOR_KEY,
    FALLBACK_ERRORS,
    converged_or_raise,
    warn_fallback,
)


def run_fast_trial(spec: ArimaSpec, y: np.ndarray, season_length: int,
                   criterion: Criterion, root_limit: float = MAX_INVERSE_ROOT) -> Trial:
    """Fit ``spec`` on ``y`` with the fast estimator and judge the fit (``root_limit``:
    largest inverse-root modulus accepted)."""
    if spec.min_train(season_length) > len(y):
        return Trial(spec, "too_short", math.inf, None, ())
    try:
        estimate = converged_or_raise(fast_estimate(spec, y, season_length, screening=True))
    except FALLBACK_ERRORS as exc:
        return _fallback(spec, y, season_length, criterion, root_limit, exc)
    value = information_criterion(estimate, criterion)
    if not math.isfinite(value):
        return Trial(spec, "failed", math.inf, None, (), estimate.params)
    if largest_root(estimate.params) > root_limit:
        return Trial(spec, "near_unit_root", math.inf, None, (), estimate.params)
    return Trial(spec, "accepted", value, None, (), {**estimate.params, ESTIMATOR_KEY: 1.0})


def information_criterion(estimate: FastFit, criterion: Criterion) -> float:
    """statsmodels' AIC, AICc or BIC of a fast estimate."""
    k, n = len(estimate.params), estimate.nobs
    aic = -2.0 * estimate.llf + 2.0 * k
    if criterion == "aic":
        return aic
    if criterion == "bic":
        return -2.0 * estimate.llf + k * math.log(n)
    return aic + 2.0 * k * (k + 1) / (n - k - 1) if n - k - 1 > 0 else math.inf


def largest_root(params: Params) -> float:
    """Largest inverse-root modulus over the AR, MA, seasonal AR and seasonal MA factors
    (seasonal ones in the variable z^s, as the reference trial judges them)."""
    def factor(prefix: str, sign: float) -> np.ndarray:
        values = [v for name, v in params.items() if name.startswith(prefix)]
        result: np.ndarray = np.r_[1.0, sign * np.asarray(values, dtype=float)]
        return result
    factors = (factor("ar.L", -1.0), factor("ma.L", 1.0), factor("ar.S.L", -1.0),
               factor("ma.S.L", 1.0))
    return max(largest_inverse_root(f) for f in factors)


def _fallback(spec: ArimaSpec, y: np.ndarray, season_length: int, criterion: Criterion,
              root_limit: float, exc: Exception) -> Trial:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        warn_fallback(exc)
    trial = run_trial(spec, y, season_length, criterion, root_limit)
    return Trial(trial.spec, trial.verdict, trial.score, trial.results,
                 (*caught, *trial.caught))
