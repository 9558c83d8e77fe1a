"""A fast fit's standard errors, one-step errors and log-likelihood from the compiled
likelihoods.

A fit of the arima or ets family made by the fast estimator carries no statsmodels
results object (building one, and statsmodels' complex-step Hessian on it, cost more than
the estimate itself). Its fold summary and full-series report take the same quantities
from the compiled likelihood the estimate maximised, at the estimates, in statsmodels'
parameters and order: the covariance is minus the (pseudo-)inverse of a numerical Hessian
(:mod:`~backtest.models.fast_arima_curvature`, :mod:`~backtest.models.fast_ets_curvature`),
the one-step errors are the compiled filter's, the log-likelihood the compiled one (for
ARIMA the exact likelihood of the differenced series, where statsmodels' ARIMA starts the
differenced states approximately diffuse: ~1e-6 apart). The inverse is taken after scaling the
Hessian to a unit diagonal, so that a variance of 1e-8 next to coefficients of order 1
does not fall under the pseudo-inverse's cut-off (statsmodels inverts unscaled).
"""

from __future__ import annotations

import numpy as np

from backtest.assessment.insample import (
    ETS_DYNAMICS,
    InSample,
    arima_burn_in,
    arima_model_df,
)
from backtest.models import fast_arima, fast_arima_curvature, fast_ets, fast_ets_curvature
from backtest.models.arima import ArimaSpec
from backtest.models.base import Fit, ModelSpec
from backtest.models.ets import EtsSpec

#: The fold record's account of the covariance computed here.
DESCRIPTION = ("inverse numerical Hessian of the compiled exact log-likelihood: ARIMA "
               "coefficients by Richardson-extrapolated central differences of the Kalman "
               "filter's sums (step eps^(1/4)), the mean and sigma2 terms exact; ETS by "
               "central differences of the exact gradient (step eps^(1/3) max(|x|, 0.1))")
#: Relative cut-off of the pseudo-inverse (statsmodels' ``pinv_extended`` default).
_RCOND = 1e-15


def compiles(spec: ModelSpec, fit: Fit) -> bool:
    """Whether the fold summary and report of ``fit`` come from the compiled likelihood: an
    arima or ets fit without statsmodels' results object."""
    return fit.raw is None and isinstance(spec, ArimaSpec | EtsSpec)


def variances(spec: ArimaSpec | EtsSpec, fit: Fit, y: np.ndarray, season_length: int
              ) -> tuple[np.ndarray, dict[str, str]]:
    """Per parameter of ``fit`` (in its order), the variance of the estimate, and notes
    for the parameters that are not estimated (ETS: the last initial seasonal state)."""
    module = fast_arima_curvature if isinstance(spec, ArimaSpec) else fast_ets_curvature
    names, hessian = module.hessian(spec, y, season_length, fit.params)
    covariance = _negative_inverse(hessian)
    diagonal = dict(zip(names, np.diag(covariance)))
    fixed = {name: "fixed by the seasonal normalisation while estimating: no standard error"
             for name in fit.params if name not in diagonal}
    return np.array([diagonal.get(name, np.nan) for name in fit.params]), fixed


def one_step_errors(spec: ArimaSpec | EtsSpec, fit: Fit, y: np.ndarray,
                    season_length: int) -> InSample:
    """The compiled filter's one-step errors (statsmodels' residuals after the burn-in
    for ARIMA, its ``resid`` for ETS) and the Ljung-Box degrees of freedom."""
    y = np.asarray(y, dtype=float)
    if isinstance(spec, ArimaSpec):
        errors = fast_arima_curvature.one_step_errors(spec, y, season_length, fit.params)
        note = ("compiled Kalman filter's one-step errors of the differenced series "
                f"(the residuals after a burn-in of d + D*m = "
                f"{arima_burn_in(spec, season_length)})")
        out = InSample(errors, arima_model_df(spec), note)
    else:
        errors = fast_ets_curvature.one_step_errors(spec, y, season_length, fit.params)
        kind = "relative" if spec.error == "multiplicative" else "additive"
        model_df = len([name for name in fit.params if name in ETS_DYNAMICS])
        out = InSample(errors, model_df, f"compiled ETS innovations ({kind} errors)")
    if not np.all(np.isfinite(errors)):
        return InSample(None, out.model_df, f"{out.note}: contain NaN or infinite values")
    return out


def likelihood(spec: ArimaSpec | EtsSpec, fit: Fit, y: np.ndarray, season_length: int
               ) -> tuple[float, int, int]:
    """The log-likelihood at the estimates, with the number of parameters K and of
    effective observations N as statsmodels' results count them (``df_model``,
    ``nobs_effective``): ARIMA K every parameter including sigma2, N = n - d - D*m; ETS K
    every parameter plus the innovation variance it concentrates out, N = n."""
    y = np.asarray(y, dtype=float)
    if isinstance(spec, ArimaSpec):
        return (fast_arima.fast_loglike(spec, y, season_length, fit.params), len(fit.params),
                len(y) - arima_burn_in(spec, season_length))
    return (fast_ets.fast_loglike(spec, y, season_length, fit.params), len(fit.params) + 1,
            len(y))


def _negative_inverse(hessian: np.ndarray) -> np.ndarray:
    """``-pinv(H)``, computed on H scaled to a unit diagonal (NaN where H is not finite)."""
    if not np.all(np.isfinite(hessian)):
        return np.full(hessian.shape, np.nan)
    scale = np.sqrt(np.abs(np.diag(hessian)))
    scale[scale == 0] = 1.0
    scaled = hessian / np.outer(scale, scale)
    result: np.ndarray = -np.linalg.pinv(scaled, rcond=_RCOND) / np.outer(scale, scale)
    return result
