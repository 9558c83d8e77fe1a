"""The ARIMA state-space system filled in from the parameters is statsmodels' own.

Reference: statsmodels 0.15.0, ``statsmodels.tsa.arima.model.ARIMA`` updated to the
parameters, its matrices and ``ssm.initialization`` read back
(:mod:`tests.backtest.statsmodels_system`). Matrices to 1e-12, the initial covariance of
the ARMA states to 1e-10 relative to its largest entry, over every order the engine allows
(p, q <= 5, d <= 2, P, Q <= 2, D <= 1) with random stationary and invertible parameters.
Near the stationarity boundary statsmodels' Lyapunov solver loses digits; there the check
is the Lyapunov equation itself, which ours must solve at least as well as statsmodels'.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from statsmodels.tsa.statespace.tools import constrain_stationary_univariate

from backtest.models.arima import ArimaSpec, _system_at
from tests.backtest.statsmodels_system import statsmodels_system

MATRIX_TOLERANCE = 1e-12
COVARIANCE_TOLERANCE = 1e-10
SEASONAL_ORDERS = [None, *itertools.product(range(3), range(2), range(3))]
#: Periods cycled through the grid; one not above p or q becomes 12, so that no
#: nonseasonal lag meets a seasonal one (statsmodels refuses such a model, so the engine
#: never forecasts with it).
PERIODS = (12, 6, 7, 4, 2)


def _deterministic(integration: int, case: int) -> str:
    """A deterministic term the engine allows with ``integration`` = d + D."""
    allowed = {0: ("none", "constant"), 1: ("none", "drift")}.get(integration, ("none",))
    return allowed[case % len(allowed)]


def _grid() -> list[ArimaSpec]:
    """Every (p, d, q), each with a seasonal part and a period taken in turn."""
    specs = []
    for case, (p, d, q) in enumerate(itertools.product(range(6), range(3), range(6))):
        seasonal = SEASONAL_ORDERS[case % len(SEASONAL_ORDERS)]
        period = PERIODS[case % len(PERIODS)]
        if period <= max(p, q) and seasonal is not None:
            period = 12
        integration = d + (seasonal[1] if seasonal else 0)
        specs.append(ArimaSpec((p, d, q), seasonal, period if seasonal else None,
                               _deterministic(integration, case)))
    return specs


def _random_params(spec: ArimaSpec, rng: np.random.Generator, spread: float) -> dict[str, float]:
    """Stationary AR and invertible MA coefficients through Monahan's map (statsmodels'
    ``constrain_stationary_univariate``) of values uniform in [-spread, spread]."""
    p, _, q = spec.order
    big_p, _, big_q = spec.seasonal or (0, 0, 0)
    m = spec.period or 12
    params: dict[str, float] = {"sigma2": float(rng.uniform(0.01, 2.0)),
                                "constant": float(rng.normal()),
                                "drift": float(rng.normal(0, 0.1))}
    for prefix, lags, sign in (("ar.L", range(1, p + 1), 1.0), ("ma.L", range(1, q + 1), -1.0),
                               ("ar.S.L", range(m, m * big_p + 1, m), 1.0),
                               ("ma.S.L", range(m, m * big_q + 1, m), -1.0)):
        if len(lags):
            values = constrain_stationary_univariate(rng.uniform(-spread, spread, len(lags)))
            params.update({f"{prefix}{lag}": sign * float(v) for lag, v in zip(lags, values)})
    return params


def _arma_block(spec: ArimaSpec) -> slice:
    """The ARMA states (after the d + D*m differencing states)."""
    d, big_d = spec.order[1], (spec.seasonal or (0, 0, 0))[1]
    return slice(d + big_d * (spec.period or 12), None)


def test_grid_of_orders_equals_statsmodels():
    rng = np.random.default_rng(18)
    specs = _grid()
    assert {s.order for s in specs} == set(itertools.product(range(6), range(3), range(6)))
    assert {s.seasonal for s in specs} == set(SEASONAL_ORDERS)
    for spec in specs:
        for _ in range(2):
            params = _random_params(spec, rng, spread=1.0)
            ours, mean, cov = _system_at(spec, 12, params)
            theirs, their_mean, their_cov = statsmodels_system(spec, 12, params)
            for name in ("design", "transition", "state_intercept", "disturbance_cov"):
                np.testing.assert_allclose(getattr(ours, name), getattr(theirs, name), rtol=0,
                                           atol=MATRIX_TOLERANCE, err_msg=f"{spec} {name}")
            assert ours.obs_var == theirs.obs_var == 0.0
            np.testing.assert_allclose(mean, their_mean, rtol=0, atol=MATRIX_TOLERANCE)
            block = _arma_block(spec)
            scale = np.max(np.abs(their_cov[block, block]))
            np.testing.assert_allclose(cov, their_cov, rtol=0,
                                       atol=COVARIANCE_TOLERANCE * scale, err_msg=str(spec))
            # the differencing states start at statsmodels' approximate-diffuse variance
            assert np.all(np.diag(cov)[:block.start] == 1e6)


def _lyapunov_residual(spec: ArimaSpec, params: dict[str, float], cov: np.ndarray) -> float:
    """Largest entry of ``T P T' + R Q R' - P`` on the ARMA block, relative to ``P``."""
    system, _, _ = statsmodels_system(spec, 12, params)
    block = _arma_block(spec)
    t, p = system.transition[block, block], cov[block, block]
    residual = t @ p @ t.T + system.disturbance_cov[block, block] - p
    return float(np.max(np.abs(residual)) / np.max(np.abs(p)))


@pytest.mark.parametrize(("spec", "params"), [
    (ArimaSpec((5, 0, 4), (2, 0, 1), 12),
     {"ar.L1": 0.2, "ar.L2": -0.1, "ar.L3": 0.05, "ar.L4": 0.1, "ar.L5": 0.2, "ma.L1": 0.3,
      "ma.L2": 0.1, "ma.L3": -0.2, "ma.L4": 0.1, "ar.S.L12": 0.999, "ar.S.L24": -0.0005,
      "ma.S.L12": -0.3, "sigma2": 0.7}),
    (ArimaSpec((2, 1, 1), (1, 0, 0), 4), {"ar.L1": 1.5, "ar.L2": -0.5005, "ma.L1": 0.4,
                                          "ar.S.L4": 0.9, "sigma2": 1.3}),
    (ArimaSpec((1, 0, 2), deterministic="constant"),
     {"constant": 2.0, "ar.L1": 0.99999, "ma.L1": -0.5, "ma.L2": 0.2, "sigma2": 0.05}),
], ids=["seasonal-ar-near-1", "ar-root-near-1", "ar1-near-1"])
def test_near_the_boundary_the_lyapunov_equation_is_solved_at_least_as_well(spec, params):
    """Roots within 1e-3 of the unit circle: the two covariances still agree to 1e-6
    relative (measured: up to 5e-10, beyond the grid's tolerance), and ours leaves a
    residual of the Lyapunov equation below 1e-13 and no larger than statsmodels' (measured:
    2e-16 against 1.4e-12 on the seasonal case), or than 1e-15 where statsmodels' is
    smaller still."""
    _, _, cov = _system_at(spec, 12, params)
    _, _, their_cov = statsmodels_system(spec, 12, params)
    block = _arma_block(spec)
    scale = np.max(np.abs(their_cov[block, block]))
    np.testing.assert_allclose(cov, their_cov, rtol=0, atol=1e-6 * scale)
    ours, theirs = _lyapunov_residual(spec, params, cov), _lyapunov_residual(spec, params,
                                                                            their_cov)
    assert ours <= max(theirs, 1e-15)
    assert ours < 1e-13


@pytest.mark.parametrize(("spec", "params"), [
    (ArimaSpec((1, 1, 1)), {"ar.L1": 1.0, "ma.L1": 0.3, "sigma2": 1.0}),
    (ArimaSpec((2, 0, 0), deterministic="constant"),
     {"constant": 0.0, "ar.L1": 0.5, "ar.L2": 0.6, "sigma2": 1.0}),
    (ArimaSpec((0, 1, 1), (1, 0, 1), 12),
     {"ma.L1": -0.4, "ar.S.L12": -1.01, "ma.S.L12": 0.2, "sigma2": 1.0}),
], ids=["unit-root", "explosive-ar2", "explosive-seasonal"])
def test_a_nonstationary_ar_part_is_refused_as_statsmodels_refuses_it(spec, params):
    with pytest.raises(ValueError, match="not stationary"):
        statsmodels_system(spec, 12, params)
    with pytest.raises(ValueError, match="not stationary"):
        _system_at(spec, 12, params)
