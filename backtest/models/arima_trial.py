"""Fitting one ARIMA order during a search, and deciding whether it may be chosen.

An order is rejected when its fit raises, when the optimiser reports non-convergence (or
statsmodels warns so), when its criterion is not finite, or when an AR or MA factor has an
inverse root of modulus above :data:`MAX_INVERSE_ROOT` (near the unit circle: a near
non-stationary or near non-invertible fit, often over-differencing or cancelling factors).
Warnings raised while fitting are kept with the trial, not emitted.

Fits are statsmodels' exact maximum likelihood, as in the ``arima`` family, but allowed
:data:`MAX_ITERATIONS` optimiser iterations: with statsmodels' default of 50, many seasonal
fits stop short of the optimum and would be rejected as non-converged. Data of extreme
scale are rescaled before estimating by the family's rule
(:meth:`~.arima.ArimaSpec.rescaling`), and the results are those of the original data at
the estimate mapped back, so criteria compare across orders on the original scale (on log
data of a smooth series every order would otherwise stop short and be rejected).

References
----------
Hyndman, R. J. and Khandakar, Y. (2008). Automatic time series forecasting: the forecast
package for R. *Journal of Statistical Software* 27(3).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from statsmodels.tools.sm_exceptions import ConvergenceWarning

from backtest.models.arima import ArimaSpec
from backtest.models.base import Params

#: Default largest modulus of an inverse AR or MA root a chosen model may have (common
#: practice; measured in ``bench/search_thresholds.py``).
MAX_INVERSE_ROOT = 0.99
#: L-BFGS iterations allowed per fit.
MAX_ITERATIONS = 200

Criterion = Literal["aicc", "aic", "bic"]
Verdict = Literal["accepted", "too_short", "failed", "not_converged", "near_unit_root"]


@dataclass(frozen=True, eq=False)
class Trial:
    """One fitted order: verdict, criterion (``inf`` unless accepted), statsmodels results
    (``None`` from the fast estimator, which gives ``estimates`` instead)."""

    spec: ArimaSpec
    verdict: Verdict
    score: float
    results: Any
    caught: tuple[warnings.WarningMessage, ...]
    estimates: Params | None = None


def run_trial(spec: ArimaSpec, y: np.ndarray, season_length: int, criterion: Criterion,
              root_limit: float = MAX_INVERSE_ROOT) -> Trial:
    """Fit ``spec`` on ``y`` and judge the fit (``root_limit``: largest inverse-root
    modulus accepted)."""
    if spec.min_train(season_length) > len(y):
        return Trial(spec, "too_short", math.inf, None, ())
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        factor = spec.rescaling(y, season_length)
        try:
            results = spec.model(np.asarray(y, dtype=float) * factor, season_length).fit(
                method_kwargs={"maxiter": MAX_ITERATIONS})
            if factor != 1.0:
                results = spec.unscaled(results, y, season_length, factor)
        except (ValueError, np.linalg.LinAlgError):
            results = None
    recorded = tuple(caught)
    if results is None:
        return Trial(spec, "failed", math.inf, None, recorded)
    verdict = _verdict(results, recorded, criterion, root_limit)
    score = float(getattr(results, criterion)) if verdict == "accepted" else math.inf
    return Trial(spec, verdict, score, results, recorded)


def largest_inverse_root(lag_polynomial: np.ndarray) -> float:
    """Largest modulus among the inverse roots of ``1 + c_1 z + ... + c_k z^k``.

    ``lag_polynomial`` is ``[1, c_1, ..., c_k]``; the inverse roots are the roots of
    ``z^k + c_1 z^(k-1) + ... + c_k``, so a stationary (invertible) factor has all of them
    inside the unit circle.
    """
    roots = np.roots(np.asarray(lag_polynomial, dtype=float))
    return float(np.max(np.abs(roots))) if roots.size else 0.0


def _verdict(results: Any, caught: tuple[warnings.WarningMessage, ...],
             criterion: Criterion, root_limit: float) -> Verdict:
    if not results.mle_retvals.get("converged", True) or any(
            issubclass(w.category, ConvergenceWarning) for w in caught):
        return "not_converged"
    if not math.isfinite(getattr(results, criterion)):
        return "failed"
    # statsmodels writes AR factors as 1 - phi z and MA factors as 1 + theta z; seasonal
    # factors are polynomials in z^m, whose inverse roots are judged in that variable.
    factors = (np.r_[1.0, -results.arparams], np.r_[1.0, results.maparams],
               np.r_[1.0, -results.seasonalarparams], np.r_[1.0, results.seasonalmaparams])
    if max(largest_inverse_root(f) for f in factors) > root_limit:
        return "near_unit_root"
    return "accepted"
