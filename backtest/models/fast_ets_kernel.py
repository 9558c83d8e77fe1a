"""Compiled exact log-likelihood of the ETS classes, with its exact gradient, and the
smoothing pass the forecasts start from.

The recursions are statsmodels' ``ETSModel`` smoother (the error-correction form of
Hyndman et al. 2008, ch. 2, with an additive or damped trend and an additive or
multiplicative season; the point recursions are the same for both error types). The
parameters are statsmodels' internal vector

    (alpha, beta*, gamma*, phi, l_0, b_0, s_{-1}, ..., s_{-m})

with ``beta* = beta / alpha`` and ``gamma* = gamma / (1 - alpha)``; a class without trend
has ``beta* = 0``, ``phi = 1``, ``b_0 = 0``, one without season ``m = 1``, ``gamma* = 0``,
``s_{-1} = 0``. The log-likelihood is statsmodels' with the scale concentrated out
(Ord, Koehler & Snyder 1997):

    -n/2 (log(2 pi SSE / n) + 1) - [multiplicative error] sum log |yhat_t|,

SSE the sum of squared errors ``y - yhat`` (additive) or ``(y - yhat) / yhat``
(multiplicative). Its gradient with respect to the parameters in ``free`` comes from
propagating the derivatives of the states through the recursions alongside them
(forward mode), at the cost of a few likelihood passes whatever the number of parameters.

The seasonal states are kept in a ring of ``m`` slots (slot ``t mod m`` holds the state of
``m`` steps before ``t``), so a step costs the same for every period.

References
----------
Hyndman, R. J., Koehler, A. B., Ord, J. K. and Snyder, R. D. (2008). *Forecasting with
Exponential Smoothing: The State Space Approach*. Springer.
Ord, J. K., Koehler, A. B. and Snyder, R. D. (1997). Estimation and prediction for a class
of dynamic nonlinear statistical models. *JASA* 92(440), 1621-1629.
"""

from __future__ import annotations

import math

import numpy as np

from backtest.models.compiled import njit

#: Index of each smoothing parameter and initial state in the internal vector.
ALPHA, BETA_STAR, GAMMA_STAR, PHI, LEVEL, TREND, SEASONS = 0, 1, 2, 3, 4, 5, 6


@njit
def loglike_gradient(theta: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
                     multiplicative_season: bool, free: np.ndarray,
                     gradient: np.ndarray) -> float:
    """The log-likelihood at the internal vector ``theta`` (length ``6 + m``); its partial
    derivatives with respect to ``theta[free]`` are written to ``gradient``. ``free``
    lists the smoothing parameters (indices below :data:`LEVEL`) before the initial
    states. Returns NaN where the recursions break down: a division by a zero season,
    level or prediction in a multiplicative class (statsmodels' likelihood is then not
    finite either), a zero or non-finite error sum."""
    k = free.shape[0]
    alpha, beta, gamma, phi = theta[ALPHA], theta[BETA_STAR], theta[GAMMA_STAR], theta[PHI]
    dl = np.zeros(k)
    db = np.zeros(k)
    ring = np.empty(m)
    dring = np.zeros((m, k))
    for i in range(m):
        ring[i] = theta[SEASONS + m - 1 - i]
    smoothing = 0  # the free smoothing parameters come first
    for j in range(k):
        f = free[j]
        if f < LEVEL:
            smoothing = j + 1
        elif f == LEVEL:
            dl[j] = 1.0
        elif f == TREND:
            db[j] = 1.0
        else:
            dring[m - 1 - (f - SEASONS), j] = 1.0
    level, trend = theta[LEVEL], theta[TREND]
    n = y.shape[0]
    sse, sum_log = 0.0, 0.0
    d_sse = np.zeros(k)
    d_log = np.zeros(k)
    for t in range(n):
        r = t % m
        old = ring[r]
        yt = y[t]
        base = level + phi * trend
        # each derivative below is linear in those of the previous states, with these
        # coefficients: d_yhat = y_base d_base + y_old d_old, d_level = level_old d_old +
        # (1 - alpha) d_base, d_season = season_level d_level + (1 - gamma) d_old
        if multiplicative_season and old == 0.0:
            return _broken(gradient)
        if multiplicative_season:
            yhat = base * old
            new_level = alpha * (yt / old) + (1 - alpha) * base
            y_base, y_old, level_old = old, base, -alpha * yt / (old * old)
        else:
            yhat = base + old
            new_level = alpha * (yt - old) + (1 - alpha) * base
            y_base, y_old, level_old = 1.0, 1.0, -alpha
        new_trend = beta * (new_level - level) + (1 - beta) * phi * trend
        if multiplicative_season and new_level == 0.0:
            return _broken(gradient)
        if multiplicative_season:
            new_season = gamma * yt / new_level + (1 - gamma) * old
            season_level = -gamma * yt / (new_level * new_level)
        else:
            new_season = gamma * (yt - new_level) + (1 - gamma) * old
            season_level = -gamma
        if multiplicative_error and yhat == 0.0:
            return _broken(gradient)
        if multiplicative_error:
            e = (yt - yhat) / yhat
            sum_log += math.log(abs(yhat))
            sse_yhat = -2.0 * e * yt / (yhat * yhat)
            log_yhat = 1.0 / yhat
        else:
            e = yt - yhat
            sse_yhat = -2.0 * e
            log_yhat = 0.0
        sse += e * e
        for j in range(smoothing):  # with the explicit partial derivatives
            f = free[j]
            d_old = dring[r, j]
            d_base = dl[j] + phi * db[j]
            if f == PHI:
                d_base += trend
            d_yhat = y_base * d_base + y_old * d_old
            d_level = level_old * d_old + (1 - alpha) * d_base
            if f == ALPHA:
                d_level += (yt / old if multiplicative_season else yt - old) - base
            d_trend = beta * (d_level - dl[j]) + (1 - beta) * phi * db[j]
            if f == PHI:
                d_trend += (1 - beta) * trend
            elif f == BETA_STAR:
                d_trend += new_level - level - phi * trend
            d_season = season_level * d_level + (1 - gamma) * d_old
            if f == GAMMA_STAR:
                d_season += (yt / new_level if multiplicative_season
                             else yt - new_level) - old
            d_sse[j] += sse_yhat * d_yhat
            d_log[j] += log_yhat * d_yhat
            dl[j] = d_level
            db[j] = d_trend
            dring[r, j] = d_season
        for j in range(smoothing, k):  # initial states: propagation only
            d_old = dring[r, j]
            d_base = dl[j] + phi * db[j]
            d_yhat = y_base * d_base + y_old * d_old
            d_level = level_old * d_old + (1 - alpha) * d_base
            db[j] = beta * (d_level - dl[j]) + (1 - beta) * phi * db[j]
            dl[j] = d_level
            dring[r, j] = season_level * d_level + (1 - gamma) * d_old
            d_sse[j] += sse_yhat * d_yhat
            d_log[j] += log_yhat * d_yhat
        level, trend = new_level, new_trend
        ring[r] = new_season
    if not (sse > 0.0 and math.isfinite(sse) and math.isfinite(sum_log)):
        return _broken(gradient)
    for j in range(k):
        gradient[j] = -0.5 * n * d_sse[j] / sse - d_log[j]
    return float(-0.5 * n * (math.log(2 * math.pi * sse / n) + 1) - sum_log)


@njit
def _broken(gradient: np.ndarray) -> float:
    """The value (NaN) and gradient (NaN) where the recursions break down."""
    for j in range(gradient.shape[0]):
        gradient[j] = math.nan
    return math.nan


@njit
def objective(x: np.ndarray, theta: np.ndarray, y: np.ndarray, m: int,
              multiplicative_error: bool, multiplicative_season: bool, free: np.ndarray
              ) -> tuple[float, np.ndarray]:
    """Minus the log-likelihood per observation (statsmodels' objective) and its gradient,
    at ``theta`` with ``theta[free] = x``; a breakdown gives a large finite value and
    a zero gradient, which the line search backs away from."""
    full = theta.copy()
    for j in range(free.shape[0]):
        full[free[j]] = x[j]
    gradient = np.empty(free.shape[0])
    value = loglike_gradient(full, y, m, multiplicative_error, multiplicative_season, free,
                             gradient)
    n = y.shape[0]
    if not math.isfinite(value):
        return 1e10, np.zeros(free.shape[0])
    for j in range(free.shape[0]):
        gradient[j] = -gradient[j] / n
    return -value / n, gradient


@njit
def smoothing_pass(theta: np.ndarray, y: np.ndarray, m: int, multiplicative_season: bool
                   ) -> tuple[np.ndarray, np.ndarray]:
    """The one-step predictions and the states after each observation at the internal
    vector ``theta``, as statsmodels' ``ETSModel.smooth`` returns them: ``states[t]`` holds
    the level, the trend and the new seasonal state after ``y[t]`` (0 for a component the
    class lacks). The operations and their order are statsmodels' smoother's, so the two
    agree to rounding. Everything is NaN where the recursions break down (a division by a
    zero season or level in a multiplicative season; statsmodels' values are then not
    finite either)."""
    alpha, beta, gamma, phi = theta[ALPHA], theta[BETA_STAR], theta[GAMMA_STAR], theta[PHI]
    ring = np.empty(m)
    for i in range(m):
        ring[i] = theta[SEASONS + m - 1 - i]
    level, trend = theta[LEVEL], theta[TREND]
    n = y.shape[0]
    fitted = np.empty(n)
    states = np.empty((n, 3))
    for t in range(n):
        r = t % m
        old = ring[r]
        yt = y[t]
        base = level + phi * trend
        if multiplicative_season:
            if old == 0.0:
                return np.full(n, math.nan), np.full((n, 3), math.nan)
            fitted[t] = base * old
            new_level = alpha * (yt / old) + (1 - alpha) * base
        else:
            fitted[t] = base + old
            new_level = alpha * (yt - old) + (1 - alpha) * base
        new_trend = beta * (new_level - level) + (1 - beta) * phi * trend
        if multiplicative_season:
            if new_level == 0.0:
                return np.full(n, math.nan), np.full((n, 3), math.nan)
            new_season = gamma * (yt / new_level) + (1 - gamma) * old
        else:
            new_season = gamma * (yt - new_level) + (1 - gamma) * old
        states[t, 0], states[t, 1], states[t, 2] = new_level, new_trend, new_season
        level, trend = new_level, new_trend
        ring[r] = new_season
    return fitted, states


@njit
def one_step_errors(theta: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
                    multiplicative_season: bool) -> np.ndarray:
    """The one-step errors of the recursions at the internal vector ``theta``:
    ``y - yhat``, or ``(y - yhat) / yhat`` for a multiplicative error (statsmodels'
    ``resid``); NaN throughout where the recursions break down."""
    fitted, _ = smoothing_pass(theta, y, m, multiplicative_season)
    errors: np.ndarray = y - fitted
    if not multiplicative_error:
        return errors
    if np.any(fitted == 0.0):
        return np.full(y.shape[0], math.nan)
    relative: np.ndarray = errors / fitted
    return relative
