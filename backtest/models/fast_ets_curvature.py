"""Curvature and one-step errors of the compiled ETS likelihood at given estimates.

For a fit without statsmodels' results object (the fast estimator's), the fold summary
needs what statsmodels' ``cov_params_approx`` and ``resid`` would give. The Hessian is
that of statsmodels' log-likelihood (the scale concentrated out) in its external
coordinates (smoothing parameters unstarred, in its order) over the parameters its
optimiser moves (:attr:`.fast_ets.EtsClass.free`): the last initial seasonal state, which
statsmodels fixes at 0 or 1 while estimating, is left out, so the level-and-season
direction along which the likelihood is exactly flat does not enter the inverse. Each
column is the central difference of the kernel's exact gradient (carried from the starred
coordinates by the chain rule) with statsmodels' step ``eps^(1/3) max(|x|, 0.1)``
(truncation and rounding errors near ``eps^(2/3)`` relative), the result symmetrised.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from backtest.models import fast_ets_kernel as kernel
from backtest.models.base import Params
from backtest.models.fast_ets import EtsClass

if TYPE_CHECKING:
    from backtest.models.ets import EtsSpec

#: statsmodels' relative step for its numerical Hessian.
STEP = float(np.finfo(float).eps) ** (1 / 3)


def hessian(spec: EtsSpec, y: np.ndarray, season_length: int, params: Params
            ) -> tuple[list[str], np.ndarray]:
    """The names of the parameters statsmodels' optimiser moves, in its order, and the
    Hessian of the log-likelihood in them at ``params``."""
    form = EtsClass.of(spec, season_length)
    y = np.ascontiguousarray(y, dtype=float)
    free = form.free
    names = form.names[:len(free)]  # the fixed last seasonal state comes last
    base = form.internal(params)
    x = np.array([params[n] for n in names], dtype=float)
    step = STEP * np.maximum(np.abs(x), 0.1)
    out = np.empty((len(x), len(x)))
    for i in range(len(x)):
        up, down = x.copy(), x.copy()
        up[i] += step[i]
        down[i] -= step[i]
        out[:, i] = (_gradient(form, y, base, up) - _gradient(form, y, base, down)) / (
            2 * step[i])
    return names, (out + out.T) / 2


def _gradient(form: EtsClass, y: np.ndarray, base: np.ndarray, x: np.ndarray) -> np.ndarray:
    """The log-likelihood's gradient in the external coordinates ``x`` of the free
    parameters (``base`` gives the fixed ones)."""
    free = form.free
    theta = base.copy()
    theta[free] = x
    alpha = x[0]
    trend_at = np.flatnonzero(free == kernel.BETA_STAR)
    season_at = np.flatnonzero(free == kernel.GAMMA_STAR)
    theta[kernel.BETA_STAR] = x[trend_at[0]] / alpha if len(trend_at) else 0.0
    theta[kernel.GAMMA_STAR] = x[season_at[0]] / (1 - alpha) if len(season_at) else 0.0
    starred = np.empty(len(free))
    kernel.loglike_gradient(theta, y, form.m, form.multiplicative_error,
                            form.season == "mul", free, starred)
    out = starred.copy()
    # beta* = beta / alpha and gamma* = gamma / (1 - alpha)
    for at, d_alpha, d_self in ((trend_at, -theta[kernel.BETA_STAR] / alpha, 1 / alpha),
                                (season_at, theta[kernel.GAMMA_STAR] / (1 - alpha),
                                 1 / (1 - alpha))):
        if len(at):
            out[0] += starred[at[0]] * d_alpha
            out[at[0]] = starred[at[0]] * d_self
    return out


def one_step_errors(spec: EtsSpec, y: np.ndarray, season_length: int, params: Params
                    ) -> np.ndarray:
    """statsmodels' ``resid`` of the smoothing pass at ``params``: ``y - yhat``, or
    ``(y - yhat) / yhat`` for a multiplicative error."""
    form = EtsClass.of(spec, season_length)
    result: np.ndarray = kernel.one_step_errors(
        form.internal(params), np.ascontiguousarray(y, dtype=float), form.m,
        form.multiplicative_error, form.season == "mul")
    return result
