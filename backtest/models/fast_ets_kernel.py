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
(multiplicative). Its gradient with respect to the parameters in ``free`` comes from one
backward pass of the states' adjoints through the recursions (reverse mode, Griewank &
Walther 2008, ch. 3), at the cost of about two likelihood passes whatever the number of
parameters.

The seasonal states are kept in a ring of ``m`` slots (slot ``t mod m`` holds the state of
``m`` steps before ``t``), so a step costs the same for every period.

References
----------
Griewank, A. and Walther, A. (2008). *Evaluating Derivatives: Principles and Techniques of
Algorithmic Differentiation*, 2nd ed. SIAM.
Hyndman, R. J., Koehler, A. B., Ord, J. K. and Snyder, R. D. (2008). *Forecasting with
Exponential Smoothing: The State Space Approach*. Springer.
Ord, J. K., Koehler, A. B. and Snyder, R. D. (1997). Estimation and prediction for a class
of dynamic nonlinear statistical models. *JASA* 92(440), 1621-1629.
"""

from __future__ import annotations

import math

import numpy as np

from backtest.models.compiled import njit, njit_ieee_division

#: Index of each smoothing parameter and initial state in the internal vector.
ALPHA, BETA_STAR, GAMMA_STAR, PHI, LEVEL, TREND, SEASONS = 0, 1, 2, 3, 4, 5, 6
#: The objective where the recursions break down: large and finite, so that the line
#: search backs away.
BROKEN = 1e10


@njit
def loglike_gradient(theta: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
                     multiplicative_season: bool, free: np.ndarray,
                     gradient: np.ndarray) -> float:
    """The log-likelihood at the internal vector ``theta`` (length ``6 + m``); its partial
    derivatives with respect to ``theta[free]`` are written to ``gradient``. ``free``
    lists the smoothing parameters (indices below :data:`LEVEL`) before the initial
    states. Returns NaN where the recursions break down: a division by a zero season,
    level or prediction in a multiplicative class (statsmodels' likelihood is then not
    finite either), a zero or non-finite error sum.

    The forward pass keeps each step's local derivatives; the backward pass carries the
    adjoints of the states (level, trend, the ring of seasons) from the last step to the
    first, collecting the smoothing parameters' explicit partial derivatives on the way
    and ending with the initial states' (reverse mode: one pass whatever the number of
    parameters)."""
    alpha, beta, gamma, phi = theta[ALPHA], theta[BETA_STAR], theta[GAMMA_STAR], theta[PHI]
    n = y.shape[0]
    ring = np.empty(m)
    for i in range(m):
        ring[i] = theta[SEASONS + m - 1 - i]
    # per step: d yhat / d base, d yhat / d old season, d level / d old season,
    # d season / d new level, d objective / d yhat (filled in once SSE is known), and the
    # explicit partials of the new level (alpha), trend (beta*), season (gamma*), and the
    # previous trend (phi's)
    steps = np.empty((10, n))  # one allocation for the ten records
    y_base, y_old, level_old, season_level, sse_yhat = steps[0], steps[1], steps[2], \
        steps[3], steps[4]
    log_yhat, by_alpha, by_beta, by_gamma, trends = steps[5], steps[6], steps[7], \
        steps[8], steps[9]
    level, trend = theta[LEVEL], theta[TREND]
    sse, sum_log = 0.0, 0.0
    r = -1  # the ring slot t mod m, kept without a division
    for t in range(n):
        r = 0 if r == m - 1 else r + 1
        old = ring[r]
        yt = y[t]
        base = level + phi * trend
        trends[t] = trend
        if multiplicative_season and old == 0.0:
            return _broken(gradient)
        if multiplicative_season:
            yhat = base * old
            new_level = alpha * (yt / old) + (1 - alpha) * base
            y_base[t], y_old[t], level_old[t] = old, base, -alpha * yt / (old * old)
            by_alpha[t] = yt / old - base
        else:
            yhat = base + old
            new_level = alpha * (yt - old) + (1 - alpha) * base
            y_base[t], y_old[t], level_old[t] = 1.0, 1.0, -alpha
            by_alpha[t] = yt - old - base
        new_trend = beta * (new_level - level) + (1 - beta) * phi * trend
        by_beta[t] = new_level - level - phi * trend
        if multiplicative_season and new_level == 0.0:
            return _broken(gradient)
        if multiplicative_season:
            new_season = gamma * yt / new_level + (1 - gamma) * old
            season_level[t] = -gamma * yt / (new_level * new_level)
            by_gamma[t] = yt / new_level - old
        else:
            new_season = gamma * (yt - new_level) + (1 - gamma) * old
            season_level[t] = -gamma
            by_gamma[t] = yt - new_level - old
        if multiplicative_error and yhat == 0.0:
            return _broken(gradient)
        if multiplicative_error:
            e = (yt - yhat) / yhat
            sum_log += math.log(abs(yhat))
            sse_yhat[t] = -2.0 * e * yt / (yhat * yhat)
            log_yhat[t] = 1.0 / yhat
        else:
            e = yt - yhat
            sse_yhat[t] = -2.0 * e
            log_yhat[t] = 0.0
        sse += e * e
        level, trend = new_level, new_trend
        ring[r] = new_season
    if not (sse > 0.0 and math.isfinite(sse) and math.isfinite(sum_log)):
        return _broken(gradient)
    weight = -0.5 * n / sse
    adj_level, adj_trend = 0.0, 0.0
    adj_ring = np.zeros(m)
    g_alpha, g_beta, g_gamma, g_phi = 0.0, 0.0, 0.0, 0.0
    r = n % m  # one past the slot of the last step
    for t in range(n - 1, -1, -1):
        r = m - 1 if r == 0 else r - 1
        adj_yhat = weight * sse_yhat[t] - log_yhat[t]
        adj_season = adj_ring[r]  # of the season this step wrote
        adj_new_level = adj_level + beta * adj_trend + season_level[t] * adj_season
        g_alpha += adj_new_level * by_alpha[t]
        g_beta += adj_trend * by_beta[t]
        g_gamma += adj_season * by_gamma[t]
        adj_base = (1 - alpha) * adj_new_level + y_base[t] * adj_yhat
        g_phi += (adj_base + (1 - beta) * adj_trend) * trends[t]
        adj_ring[r] = level_old[t] * adj_new_level + (1 - gamma) * adj_season \
            + y_old[t] * adj_yhat
        adj_level, adj_trend = (adj_base - beta * adj_trend,
                                phi * adj_base + (1 - beta) * phi * adj_trend)
    by_index = np.empty(SEASONS + m)  # the derivative by each entry of theta
    by_index[ALPHA], by_index[BETA_STAR], by_index[GAMMA_STAR] = g_alpha, g_beta, g_gamma
    by_index[PHI], by_index[LEVEL], by_index[TREND] = g_phi, adj_level, adj_trend
    for i in range(m):
        by_index[SEASONS + m - 1 - i] = adj_ring[i]
    for j in range(free.shape[0]):
        gradient[j] = by_index[free[j]]
    return float(-0.5 * n * (math.log(2 * math.pi * sse / n) + 1) - sum_log)


@njit
def _broken(gradient: np.ndarray) -> float:
    """The value (NaN) and gradient (NaN) where the recursions break down."""
    for j in range(gradient.shape[0]):
        gradient[j] = math.nan
    return math.nan


@njit
def objective(x: np.ndarray, gradient: np.ndarray, theta: np.ndarray, y: np.ndarray, m: int,
              multiplicative_error: bool, multiplicative_season: bool, free: np.ndarray
              ) -> float:
    """Minus the log-likelihood per observation (statsmodels' objective) at ``theta`` with
    ``theta[free] = x`` (written into ``theta``); its gradient is written to ``gradient``.
    A breakdown gives a large finite value and a zero gradient, which the line search
    backs away from."""
    for j in range(free.shape[0]):
        theta[free[j]] = x[j]
    value = loglike_gradient(theta, y, m, multiplicative_error, multiplicative_season, free,
                             gradient)
    n = y.shape[0]
    if not math.isfinite(value):
        for j in range(free.shape[0]):
            gradient[j] = 0.0
        return BROKEN
    for j in range(free.shape[0]):
        gradient[j] = -gradient[j] / n
    return float(-value / n)


@njit_ieee_division
def advance(level: float, trend: float, old: float, yt: float, alpha: float, beta: float,
             gamma: float, phi: float, multiplicative_season: bool
             ) -> tuple[float, float, float, float]:
    """One step of the recursions in statsmodels' smoother's operations and order: the
    prediction, and the new level, trend and season. A division by a zero season or
    level (multiplicative season) gives an infinity or NaN; callers test for it."""
    base = level + phi * trend
    if multiplicative_season:
        yhat = base * old
        new_level = alpha * (yt / old) + (1 - alpha) * base
    else:
        yhat = base + old
        new_level = alpha * (yt - old) + (1 - alpha) * base
    new_trend = beta * (new_level - level) + (1 - beta) * phi * trend
    if multiplicative_season:
        new_season = gamma * (yt / new_level) + (1 - gamma) * old
    else:
        new_season = gamma * (yt - new_level) + (1 - gamma) * old
    return yhat, new_level, new_trend, new_season


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
        fitted[t], level, trend, ring[r] = advance(level, trend, old, y[t], alpha, beta,
                                                    gamma, phi, multiplicative_season)
        if multiplicative_season and (old == 0.0 or level == 0.0):
            return np.full(n, math.nan), np.full((n, 3), math.nan)
        states[t, 0], states[t, 1], states[t, 2] = level, trend, ring[r]
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
