"""Forecasts from many origins out of one Kalman filter pass (time-invariant linear models).

With fixed parameters the Kalman filter is causal: the predicted state mean ``a_e`` and
covariance ``P_e`` at time ``e`` use observations ``0..e-1`` only, so one filter over the
longest series gives, at every origin ``e``, exactly the state a filter over ``y[:e]`` ends
with. From there the h-step forecasts follow from the system matrices alone
(Durbin & Koopman 2012, sections 4.3 and 4.11): with ``g_j = Z T^(j-1)``,

    mean_j = d_(e+j-1) + g_j a_e + sum_(i<j) g_i c
    var_j  = g_j P_e g_j' + sum_(i<j) g_i R Q R' g_i' + H

for ``j = 1..horizon``, all origins at once. The filter is the model's default
(conventional, statsmodels' initialisation, every output stored; or its compiled copy,
:mod:`.compiled_filter`): the memory-saving filters drop the predicted covariances, and
the Chandrasekhar recursions do not handle the (approximate) diffuse initialisation of
ARIMA models.

References
----------
Durbin, J. and Koopman, S. J. (2012). *Time Series Analysis by State Space Methods*,
2nd ed., Oxford University Press.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from statsmodels.tsa.statespace.kalman_filter import FilterResults
from statsmodels.tsa.statespace.mlemodel import MLEModel

_FIXED = ("design", "obs_cov", "transition", "state_intercept", "selection", "state_cov")


@dataclass(frozen=True)
class OriginStates:
    """Predicted state means ``(n_origins, k)`` and covariances ``(n_origins, k, k)``."""

    mean: np.ndarray
    cov: np.ndarray


@dataclass(frozen=True)
class LinearSystem:
    """Time-invariant matrices of a univariate state-space model (the names of Durbin &
    Koopman: ``Z``, ``H``, ``T``, ``c`` and ``R Q R'``)."""

    design: np.ndarray
    obs_var: float
    transition: np.ndarray
    state_intercept: np.ndarray
    disturbance_cov: np.ndarray

    @classmethod
    def of(cls, model: MLEModel) -> LinearSystem:
        """The matrices of ``model`` at its current parameters.

        Raises
        ------
        ValueError
            If one of them varies over time (the obs intercept may).
        """
        ssm = model.ssm
        varying = [name for name in _FIXED if getattr(ssm, name).shape[-1] != 1]
        if varying or ssm.k_endog != 1:
            raise ValueError(f"one-pass forecasts need a univariate time-invariant model; "
                             f"time-varying: {', '.join(varying) or 'none'}")
        selection = ssm.selection[..., 0]
        return cls(ssm.design[0, :, 0], float(ssm.obs_cov[0, 0, 0]), ssm.transition[..., 0],
                   ssm.state_intercept[:, 0], selection @ ssm.state_cov[..., 0] @ selection.T)

    def steps(self, horizon: int) -> np.ndarray:
        """Rows ``g_j = Z T^(j-1)`` for j = 1..horizon, shape ``(horizon, k)``."""
        rows = np.empty((horizon, len(self.design)))
        rows[0] = self.design
        for j in range(1, horizon):
            rows[j] = rows[j - 1] @ self.transition
        return rows


def states_at(filtered: FilterResults, ends: Sequence[int]) -> OriginStates:
    """The predicted states at ``ends`` from an existing filter output.

    Raises
    ------
    ValueError
        If the filter did not keep its predicted states (a memory-saving filter) or ran an
        exact diffuse initialisation (whose first covariances are not finite).
    """
    at = np.asarray(ends, dtype=int)
    if filtered.nobs_diffuse:
        raise ValueError("one-pass forecasts do not handle an exact diffuse initialisation")
    if filtered.memory_no_predicted:
        raise ValueError("the filter output does not keep its predicted states")
    return OriginStates(filtered.predicted_state[:, at].T,
                        np.moveaxis(filtered.predicted_state_cov[:, :, at], 2, 0))


def propagate(system: LinearSystem, states: OriginStates, obs_intercepts: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray]:
    """Means and variances of the h-step forecasts from every origin.

    Parameters
    ----------
    system : the model's time-invariant matrices.
    states : predicted states at the origins.
    obs_intercepts : ``d`` at the forecast times, shape ``(n_origins, horizon)``.

    Returns
    -------
    mean, var : arrays of shape ``(n_origins, horizon)``.
    """
    n, k = states.mean.shape
    horizon = obs_intercepts.shape[1]
    g = system.steps(horizon)
    drift = np.concatenate([[0.0], np.cumsum(g[:-1] @ system.state_intercept)])
    mean = obs_intercepts + states.mean @ g.T + drift
    spread = (states.cov.reshape(n * k, k) @ g.T).reshape(n, k, horizon)
    state_part = np.einsum("nkh,hk->nh", spread, g)
    noise = np.einsum("hk,kl,hl->h", g, system.disturbance_cov, g)
    accumulated = np.concatenate([[0.0], np.cumsum(noise[:-1])])
    return mean, state_part + accumulated + system.obs_var
