"""statsmodels' own ARIMA state-space system at given parameters: a statsmodels model
updated to the parameters, its matrices and its initialisation read back.

The reference for :mod:`backtest.models.arima_system`, and the route the engine took
before it (one cached model per spec on placeholder data, updated in place: one thread
at a time).
"""

from __future__ import annotations

import functools
from typing import Any

import numpy as np

from backtest.models.arima import ArimaSpec, vector
from backtest.models.base import Params
from backtest.models.kalman_stretch import LinearSystem


@functools.lru_cache(maxsize=64)
def _placeholder(spec: ArimaSpec, season_length: int) -> Any:
    """statsmodels' model of ``spec`` on zeros (its matrices do not depend on the data)."""
    return spec.model(np.zeros(spec.min_train(season_length)), season_length)


def statsmodels_system(spec: ArimaSpec, season_length: int, params: Params
                       ) -> tuple[LinearSystem, np.ndarray, np.ndarray]:
    """The matrices, initial state mean and initial state covariance of statsmodels'
    ``ARIMA`` of ``spec`` at ``params`` (statsmodels' ``update`` and ``initialization``;
    raises statsmodels' ValueError at a nonstationary AR part)."""
    model = _placeholder(spec, season_length)
    model.update(vector(model, params), transformed=True)
    system = LinearSystem.of(model)
    mean, diffuse, cov = model.ssm.initialization(model=model.ssm)
    assert not np.any(diffuse), "statsmodels' ARIMA has no exact diffuse part"
    return (LinearSystem(system.design.copy(), system.obs_var, system.transition.copy(),
                         system.state_intercept.copy(), system.disturbance_cov.copy()),
            np.array(mean, dtype=float), np.array(cov, dtype=float))
