"""statsmodels' ARIMA state-space system and initial state at given parameters, filled in
directly from the parameters.

statsmodels' ``ARIMA`` (a SARIMAX in Harvey's representation: the differencing states
first, then the ARMA states; Durbin & Koopman 2012, section 3.4) has matrices that depend
on the parameters in three places only: the first column of the ARMA block of the
transition holds the reduced AR polynomial (the product of the nonseasonal and the seasonal
one), the disturbance loading below the first ARMA state the reduced MA polynomial, and
the disturbance variance is the innovation variance. The deterministic term enters
through the observation intercept, outside the system. The initial state is zero; its
covariance is the approximate-diffuse variance (1e6) on the differencing states and the
stationary covariance on the ARMA block, where statsmodels refuses a transition with an
eigenvalue of modulus ``1 - 1e-10`` or more.

:class:`ArimaLayout` reads the fixed part once from a statsmodels model (on any data:
the matrices do not depend on it); :meth:`ArimaLayout.system_at` fills in the parameters
as statsmodels' ``update`` does and takes the stationary covariance from the compiled
element-wise solution of the Lyapunov equation (:func:`.fast_arima_kernel.stationary_cov`)
instead of statsmodels' bilinear transformation and Sylvester solver. The two agree to
about 1e-13 relative; near the stationarity boundary (a root within about 1e-3 of the unit
circle) they can differ by up to about 1e-9 relative, and there the compiled solution is
the more accurate (its Lyapunov residual is orders of magnitude below statsmodels').

References
----------
Durbin, J. and Koopman, S. J. (2012). *Time Series Analysis by State Space Methods*,
2nd ed., Oxford University Press.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from backtest.models.fast_arima_kernel import stationary_cov
from backtest.models.kalman_stretch import LinearSystem

#: statsmodels' test of a stationary transition: every eigenvalue's modulus below this.
_STATIONARY_BELOW = 1.0 - 1e-10


@dataclass(frozen=True)
class ArimaLayout:
    """The parameter-free part of a statsmodels ARIMA model's system (read-only arrays)."""

    design: np.ndarray
    obs_var: float
    #: the transition with zero AR coefficients
    transition: np.ndarray
    state_intercept: np.ndarray
    #: the disturbance loading (the selection's one column) with zero MA coefficients
    loading: np.ndarray
    #: the first ARMA state, which is also the number of differencing states
    first_arma: int
    season: int
    #: parameter names: nonseasonal AR, nonseasonal MA, seasonal AR, seasonal MA
    ar_names: tuple[str, ...]
    ma_names: tuple[str, ...]
    seasonal_ar_names: tuple[str, ...]
    seasonal_ma_names: tuple[str, ...]
    diffuse_variance: float

    @classmethod
    def of(cls, model: Any) -> ArimaLayout:
        """The layout of a statsmodels ``ARIMA`` model, as constructed (no parameters set)."""
        ssm = model.ssm
        loading = np.array(ssm["selection"][:, 0], dtype=float)
        names = list(model.param_names)

        def named(prefix: str) -> tuple[str, ...]:
            return tuple(n for n in names if n.startswith(prefix))

        arrays = (np.array(ssm["design"][0], dtype=float),
                  np.array(ssm["transition"], dtype=float),
                  np.array(ssm["state_intercept"], dtype=float), loading)
        for array in arrays:
            array.setflags(write=False)
        design, transition, state_intercept, _ = arrays
        return cls(design, float(ssm["obs_cov"][0, 0]), transition, state_intercept, loading,
                   int(np.argmax(loading)), int(model.seasonal_periods), named("ar.L"),
                   named("ma.L"), named("ar.S."), named("ma.S."), float(ssm.initial_variance))

    def system_at(self, params: Mapping[str, float]
                  ) -> tuple[LinearSystem, np.ndarray, np.ndarray]:
        """The model's matrices at ``params`` and its initial state mean and covariance.

        Raises
        ------
        ValueError
            If the AR part is not stationary (statsmodels' stationary initialisation
            refuses it too).
        """
        ar, seasonal_ar = self._coefficients(params, self.ar_names, self.seasonal_ar_names)
        ma, seasonal_ma = self._coefficients(params, self.ma_names, self.seasonal_ma_names)
        if max(_spectral_radius(ar), _spectral_radius(seasonal_ar) ** (1.0 / max(self.season, 1))
               ) >= _STATIONARY_BELOW:
            raise ValueError("the AR part is not stationary, so the ARMA states have no "
                             "stationary initial covariance")
        reduced_ar = -np.convolve(_lag_polynomial(-ar, 1), _lag_polynomial(-seasonal_ar,
                                                                          self.season))
        reduced_ma = np.convolve(_lag_polynomial(ma, 1), _lag_polynomial(seasonal_ma,
                                                                         self.season))
        first, k = self.first_arma, len(self.design)
        transition = self.transition.copy()
        transition[first:first + len(reduced_ar) - 1, first] = reduced_ar[1:]
        loading = self.loading.copy()
        loading[first + 1:first + len(reduced_ma)] = reduced_ma[1:]
        variance = float(params["sigma2"])
        selection = loading[:, None]
        disturbance_cov = selection @ np.array([[variance]]) @ selection.T
        initial_cov = np.zeros((k, k))
        initial_cov[np.arange(first), np.arange(first)] = self.diffuse_variance
        phi = np.zeros(k - first)
        phi[:len(reduced_ar) - 1] = reduced_ar[1:]
        initial_cov[first:, first:] = variance * stationary_cov(phi, loading[first:])
        system = LinearSystem(self.design.copy(), self.obs_var, transition,
                              self.state_intercept.copy(), disturbance_cov)
        return system, np.zeros(k), initial_cov

    @staticmethod
    def _coefficients(params: Mapping[str, float], nonseasonal: tuple[str, ...],
                      seasonal: tuple[str, ...]) -> tuple[np.ndarray, np.ndarray]:
        return (np.array([params[n] for n in nonseasonal], dtype=float),
                np.array([params[n] for n in seasonal], dtype=float))


def _lag_polynomial(coefficients: np.ndarray, step: int) -> np.ndarray:
    """``1 + c_1 B^step + c_2 B^(2 step) + ...`` as coefficients of increasing powers."""
    polynomial = np.zeros(len(coefficients) * step + 1)
    polynomial[0] = 1.0
    if len(coefficients):
        polynomial[step::step] = coefficients
    return polynomial


def _spectral_radius(ar: np.ndarray) -> float:
    """The largest modulus of the eigenvalues of the AR coefficients' companion matrix
    (0 without coefficients)."""
    if len(ar) == 0:
        return 0.0
    companion = np.eye(len(ar), k=1)
    companion[:, 0] = ar
    return float(np.max(np.abs(np.linalg.eigvals(companion))))
