"""How many ordinary (d) and seasonal (D) differences a training window needs.

D comes first, from the strength of seasonality; d then comes from repeated KPSS tests on
the seasonally differenced data, in the manner of Hyndman & Khandakar (2008). Warnings the
tests raise (e.g. statsmodels' ``InterpolationWarning`` for statistics beyond its p-value
table) are dropped: only the statistic and the 5 % critical value are used.

References
----------
Hyndman, R. J. and Khandakar, Y. (2008). Automatic time series forecasting: the forecast
package for R. *Journal of Statistical Software* 27(3).
Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null
hypothesis of stationarity against the alternative of a unit root. *Journal of
Econometrics* 54, 159-178.
Wang, X., Smith, K. A. and Hyndman, R. J. (2006). Characteristic-based clustering for time
series data. *Data Mining and Knowledge Discovery* 13, 335-364.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from statsmodels.tsa.seasonal import STL
from statsmodels.tsa.stattools import kpss

#: Default seasonal-strength threshold for one seasonal difference (common practice; the
#: simulation in ``bench/search_thresholds.py`` measures why: see DEVELOPERS.md).
STRONG_SEASONALITY = 0.64
#: Fewest observations on which a KPSS test is run; shorter data is not differenced further.
MIN_KPSS_LENGTH = 10
#: Whole seasons needed before the seasonal strength is estimated.
MIN_SEASONS = 3


@dataclass(frozen=True)
class Differencing:
    """Chosen d and D, with the seasonal strength behind D (``None`` when not assessed)."""

    d: int
    seasonal_d: int
    seasonal_strength: float | None


def kpss_level(x: np.ndarray, nlags: int | str = "auto") -> tuple[float, float]:
    """KPSS statistic for level stationarity and its 5 % critical value.

    ``nlags="auto"`` is statsmodels' data-dependent bandwidth (Hobijn, Franses & Ooms 1998).

    References
    ----------
    Kwiatkowski et al. (1992); critical values from their Table 1.
    """
    with warnings.catch_warnings(record=True):
        warnings.simplefilter("always")
        # The plain-tuple result exists across the supported statsmodels range (0.14-0.15).
        result = kpss(np.asarray(x, dtype=float), regression="c", nlags=nlags)
    return float(result[0]), float(result[3]["5%"])


def ordinary_differences(x: np.ndarray, max_d: int) -> int:
    """Smallest d <= ``max_d`` after which a level KPSS test at 5 % no longer rejects.

    Differencing stops early when fewer than :data:`MIN_KPSS_LENGTH` values remain or the
    data are constant (nothing left to test).
    """
    z = np.asarray(x, dtype=float)
    d = 0
    while d < max_d and len(z) >= MIN_KPSS_LENGTH and np.ptp(z) > 0:
        statistic, critical = kpss_level(z)
        if statistic <= critical:
            break
        z, d = np.diff(z), d + 1
    return d


def seasonal_strength(x: np.ndarray, period: int) -> float:
    """F_S = max(0, 1 - Var(R) / Var(S + R)) from an STL decomposition.

    References
    ----------
    Wang, Smith & Hyndman (2006); STL: Cleveland, Cleveland, McRae & Terpenning (1990),
    *Journal of Official Statistics* 6(1), 3-73.
    """
    if np.ptp(x) == 0:  # STL's rounding noise on a constant would pass for a pattern
        return 0.0
    with warnings.catch_warnings(record=True):
        warnings.simplefilter("always")
        parts = STL(np.asarray(x, dtype=float), period=period).fit()
    remainder = np.asarray(parts.resid)
    detrended = np.asarray(parts.seasonal) + remainder
    return float(max(0.0, 1.0 - np.var(remainder) / np.var(detrended)))


def choose_differencing(x: np.ndarray, period: int, max_d: int, max_seasonal_d: int,
                        threshold: float = STRONG_SEASONALITY) -> Differencing:
    """D from the seasonal strength (one seasonal difference at ``threshold`` or above),
    then d from KPSS tests on the seasonally differenced data.

    The seasonal strength is only assessed when ``period >= 2``, ``max_seasonal_d >= 1`` and
    the data span at least :data:`MIN_SEASONS` seasons; otherwise D = 0.
    """
    if period < 2 or max_seasonal_d < 1 or len(x) < MIN_SEASONS * period:
        return Differencing(ordinary_differences(x, max_d), 0, None)
    strength = seasonal_strength(x, period)
    seasonal_d = int(strength >= threshold)
    d = ordinary_differences(seasonal_difference(x, period, seasonal_d), max_d)
    return Differencing(d, seasonal_d, strength)


def difference(x: np.ndarray, d: int, seasonal_d: int, period: int) -> np.ndarray:
    """Apply (1 - B)^d (1 - B^period)^D."""
    return np.diff(seasonal_difference(x, period, seasonal_d), n=d)


def seasonal_difference(x: np.ndarray, period: int, times: int) -> np.ndarray:
    """Apply (1 - B^period) ``times`` times."""
    z = np.asarray(x, dtype=float)
    for _ in range(times):
        z = z[period:] - z[:-period]
    return z
