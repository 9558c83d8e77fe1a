"""Curvature and one-step errors of the compiled exact ARIMA likelihood at given estimates.

For a fit without statsmodels' results object (the fast estimator's), the fold summary
needs what statsmodels' ``cov_params_approx`` and ``resid`` would give: the Hessian of the
log-likelihood in statsmodels' parameters and order (constant or drift, AR, MA, seasonal
AR, seasonal MA coefficients, ``sigma2``; nothing concentrated out) and the one-step
errors. The likelihood is :func:`.fast_arima.fast_loglike`'s, over the differenced series
``w`` with residual ``u = w - beta x`` (``x`` the differenced regressor):

    l = -n/2 log(2 pi sigma2) - 1/2 L(a) - 1/2 S(beta, a) / sigma2,

``L`` the sum of log prediction variances and ``S`` the sum of squared standardised errors
of the filter at unit variance, ``a`` the ARMA coefficients. ``S`` is quadratic in
``beta`` (its coefficients are the filter's cross sums of ``u`` and ``x``), so the rows of
``beta`` and ``sigma2`` are exact given the sums and their first derivatives in ``a``;
the derivatives in ``a`` are central differences of the filter's sums with step
``eps^(1/4)`` (truncation and rounding errors both near ``eps^(1/2)`` relative), taken
ten times smaller when a step leaves the region where the filter is defined.

The one-step errors are the filter's prediction errors of ``u``: after the d + D*s
observations that statsmodels' diffuse start spends on the differenced states, its Kalman
residuals of ``y`` are these (up to its approximate start).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from backtest.models import fast_arima_kernel as kernel
from backtest.models.base import Params
from backtest.models.compiled import njit
from backtest.models.fast_arima import DifferencedProblem, coefficient_names

if TYPE_CHECKING:
    from backtest.models.arima import ArimaSpec

#: Central-difference step of the ARMA coefficients (they lie in (-1, 1) mostly).
STEP = float(np.finfo(float).eps) ** 0.25
#: Smaller steps tried when a difference leaves the region where the filter is defined.
_RETRIES = 3


@njit
def _sums(a: np.ndarray, u: np.ndarray, x: np.ndarray, p: int, q: int, big_p: int,
          big_q: int, s: int) -> tuple[float, float, float, float]:
    ar, ma = kernel.multiply(a[:p], a[p:p + q], a[p + q:p + q + big_p], a[p + q + big_p:], s)
    return kernel.filter_sums(u, x, ar, ma)


@njit
def arma_differences(a: np.ndarray, u: np.ndarray, x: np.ndarray, p: int, q: int,
                     big_p: int, big_q: int, s: int, sigma2: float, step: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """At the ARMA coefficients ``a``: the filter's sums (``L``, ``S``, cross, regressor),
    the Hessian of ``L + S / sigma2`` and the gradients of ``S`` and of the cross sum, by
    central differences with ``step``."""
    k = a.shape[0]
    centre = np.array(_sums(a, u, x, p, q, big_p, big_q, s))
    g0 = centre[0] + centre[1] / sigma2
    second = np.empty((k, k))
    d_sse = np.empty(k)
    d_cross = np.empty(k)
    for i in range(k):
        up = a.copy()
        up[i] += step[i]
        down = a.copy()
        down[i] -= step[i]
        s_up = _sums(up, u, x, p, q, big_p, big_q, s)
        s_down = _sums(down, u, x, p, q, big_p, big_q, s)
        g_up = s_up[0] + s_up[1] / sigma2
        g_down = s_down[0] + s_down[1] / sigma2
        second[i, i] = (g_up - 2.0 * g0 + g_down) / step[i] ** 2
        d_sse[i] = (s_up[1] - s_down[1]) / (2.0 * step[i])
        d_cross[i] = (s_up[2] - s_down[2]) / (2.0 * step[i])
        for j in range(i):
            total = 0.0
            for si, sj, sign in ((1.0, 1.0, 1.0), (1.0, -1.0, -1.0), (-1.0, 1.0, -1.0),
                                 (-1.0, -1.0, 1.0)):
                moved = a.copy()
                moved[i] += si * step[i]
                moved[j] += sj * step[j]
                sums = _sums(moved, u, x, p, q, big_p, big_q, s)
                total += sign * (sums[0] + sums[1] / sigma2)
            second[i, j] = total / (4.0 * step[i] * step[j])
            second[j, i] = second[i, j]
    return centre, second, d_sse, d_cross


def hessian(spec: ArimaSpec, y: np.ndarray, season_length: int, params: Params
            ) -> tuple[list[str], np.ndarray]:
    """statsmodels' parameter names and the Hessian of the exact log-likelihood in them, at
    ``params`` (NaN where the filter is not defined around the estimates)."""
    problem = DifferencedProblem.of(spec, y, season_length)
    p, q, big_p, big_q, s = problem.orders
    arma = [name for group in coefficient_names(spec, season_length) for name in group]
    a = np.array([params[n] for n in arma], dtype=float)
    beta = params.get(spec.deterministic, 0.0)
    sigma2 = params["sigma2"]
    u = np.ascontiguousarray(problem.w - beta * problem.reg)
    step = np.full(len(a), STEP)
    for _ in range(_RETRIES + 1):
        full = arma_differences(a, u, problem.reg, p, q, big_p, big_q, s, sigma2, step)
        half = arma_differences(a, u, problem.reg, p, q, big_p, big_q, s, sigma2, step / 2)
        if np.all(np.isfinite(full[1])) and np.all(np.isfinite(half[1])):
            break
        step = step / 10.0
    # Richardson: the h^2 terms of the two central differences cancel
    second, d_sse, d_cross = ((4 * b - a) / 3 for a, b in zip(full[1:], half[1:]))
    _, sse, cross, xx = full[0]
    n = len(u)
    k = len(a)
    mean = [spec.deterministic] if spec.deterministic != "none" else []
    names = [*mean, *arma, "sigma2"]
    out = np.zeros((len(names), len(names)))
    at = len(mean)  # index of the first ARMA coefficient
    out[at:at + k, at:at + k] = -0.5 * second
    last = len(names) - 1
    out[last, last] = n / (2 * sigma2**2) - sse / sigma2**3
    out[last, at:at + k] = out[at:at + k, last] = 0.5 * d_sse / sigma2**2
    if mean:
        out[0, 0] = -xx / sigma2
        out[0, at:at + k] = out[at:at + k, 0] = d_cross / sigma2
        out[0, last] = out[last, 0] = -cross / sigma2**2
    return names, out


def one_step_errors(spec: ArimaSpec, y: np.ndarray, season_length: int, params: Params
                    ) -> np.ndarray:
    """The filter's one-step prediction errors of the differenced series less its mean term
    (``n - d - D*s`` values; NaN where the filter fails)."""
    problem = DifferencedProblem.of(spec, y, season_length)
    p, q, big_p, big_q, s = problem.orders
    phi, theta, big_phi, big_theta = (np.array([params[n] for n in group], dtype=float)
                                      for group in coefficient_names(spec, season_length))
    ar, ma = kernel.multiply(phi, theta, big_phi, big_theta, s)
    u = problem.w - params.get(spec.deterministic, 0.0) * problem.reg
    result: np.ndarray = kernel.one_step_errors(np.ascontiguousarray(u), ar, ma)
    return result
