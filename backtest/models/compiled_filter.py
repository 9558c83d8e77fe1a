"""The conventional Kalman filter of a time-invariant univariate model, compiled.

The filter statsmodels runs by default (Durbin & Koopman 2012, section 4.3): with
``v_t = y_t - d_t - Z a_t`` and ``F_t = Z P_t Z' + H``, the update
``a_t|t = a_t + P_t Z' v_t / F_t``, ``P_t|t = P_t - P_t Z' Z P_t / F_t`` and the prediction
``a_t+1 = T a_t|t + c``, ``P_t+1 = T P_t|t T' + R Q R'`` (symmetrised, as statsmodels does);
a missing observation skips the update. It returns the predicted states at chosen times
only. The transition matrix of an ARIMA model is sparse (a companion block and the
differencing states), so ``T P T'`` is formed from its nonzero entries.

References
----------
Durbin, J. and Koopman, S. J. (2012). *Time Series Analysis by State Space Methods*,
2nd ed., Oxford University Press.
"""

from __future__ import annotations

import numpy as np

from backtest.models.compiled import njit


@njit
def predicted_states(y: np.ndarray, obs_intercept: np.ndarray, design: np.ndarray,
                     obs_var: float, transition: np.ndarray, state_intercept: np.ndarray,
                     disturbance_cov: np.ndarray, initial_mean: np.ndarray,
                     initial_cov: np.ndarray, ends: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Predicted state means ``(len(ends), k)`` and covariances ``(len(ends), k, k)`` at
    the (increasing) times ``ends``, each from the observations before it."""
    k = design.shape[0]
    rows, cols = np.nonzero(transition)
    values = np.empty(rows.shape[0])
    for e in range(rows.shape[0]):
        values[e] = transition[rows[e], cols[e]]
    means = np.zeros((ends.shape[0], k))
    covs = np.zeros((ends.shape[0], k, k))
    a = initial_mean.copy()
    p = initial_cov.copy()
    pz = np.zeros(k)
    a_next = np.zeros(k)
    tp = np.zeros((k, k))
    at = 0
    for t in range(y.shape[0] + 1):
        while at < ends.shape[0] and ends[at] == t:
            means[at] = a
            covs[at] = p
            at += 1
        if t == y.shape[0] or at == ends.shape[0]:
            break
        if not np.isnan(y[t]):
            for i in range(k):
                total = 0.0
                for j in range(k):
                    total += p[i, j] * design[j]
                pz[i] = total
            f = obs_var
            v = y[t] - obs_intercept[t]
            for i in range(k):
                f += design[i] * pz[i]
                v -= design[i] * a[i]
            for i in range(k):
                a[i] += pz[i] * v / f
            for i in range(k):
                for j in range(k):
                    p[i, j] -= pz[i] * pz[j] / f
        a_next[:] = state_intercept
        tp[:, :] = 0.0
        for e in range(rows.shape[0]):
            a_next[rows[e]] += values[e] * a[cols[e]]
            for j in range(k):
                tp[rows[e], j] += values[e] * p[cols[e], j]
        a[:] = a_next
        p[:, :] = disturbance_cov
        for e in range(rows.shape[0]):
            for i in range(k):
                p[i, rows[e]] += tp[i, cols[e]] * values[e]
        for i in range(k):
            for j in range(i):
                value = 0.5 * (p[i, j] + p[j, i])
                p[i, j] = value
                p[j, i] = value
    return means, covs
