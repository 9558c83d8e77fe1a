"""Point and interval accuracy measures on plain arrays.

Definitions (each checked in tests against published worked values):

- MASE: mean |e| / mean |y_t - y_{t-m}| over the training window (Hyndman & Koehler 2006;
  seasonal scaling as in the M4 competition, Makridakis et al. 2020). m = 1 gives the
  non-seasonal scaling.
- RMSSE: sqrt(mean e^2 / mean (y_t - y_{t-1})^2) (M5 competition, Makridakis et al. 2022).
- sMAPE: the M4 definition, 200/h * sum |e| / (|y| + |f|), in percent, range 0..200.
- Interval (Winkler) score for a central (1 - a) interval [l, u]:
  (u - l) + 2/a (l - y) 1{y < l} + 2/a (y - u) 1{y > u} (Winkler 1972; Gneiting & Raftery
  2007). MSIS divides its mean by the seasonal MASE scale (M4).
- Pinball (quantile) loss of a quantile forecast q at probability tau:
  (y - q)(tau - 1{y < q}) (Koenker & Bassett 1978; Gneiting & Raftery 2007, eq. 24).
- CRPS of a predictive distribution F: integral of (F(x) - 1{x >= y})^2 dx (Matheson &
  Winkler 1976; Gneiting & Raftery 2007, eq. 20), equal to twice the pinball loss
  integrated over tau in (0, 1) (Laio & Tamea 2007). Closed form for a normal
  (Gneiting & Raftery 2007, eq. 5); for a sample, the CRPS of its empirical distribution,
  E|X - y| - E|X - X'| / 2 (Gneiting & Raftery 2007, eq. 21).
"""

from __future__ import annotations

import numpy as np
from scipy import stats


def mase_scale(train: np.ndarray, m: int = 1) -> float:
    """Mean absolute lag-``m`` difference of the training data (NaN if too short)."""
    train = np.asarray(train, dtype=float)
    if len(train) <= m:
        return float("nan")
    return float(np.mean(np.abs(train[m:] - train[:-m])))


def rmsse_scale(train: np.ndarray) -> float:
    """Mean squared one-step difference of the training data (NaN if too short)."""
    train = np.asarray(train, dtype=float)
    if len(train) < 2:
        return float("nan")
    return float(np.mean(np.diff(train) ** 2))


def mase(actual: np.ndarray, forecast: np.ndarray, train: np.ndarray, m: int = 1) -> float:
    """Mean absolute scaled error of one forecast path."""
    errors = np.asarray(actual, float) - np.asarray(forecast, float)
    return float(np.mean(np.abs(errors)) / mase_scale(train, m))


def rmsse(actual: np.ndarray, forecast: np.ndarray, train: np.ndarray) -> float:
    """Root mean squared scaled error of one forecast path."""
    errors = np.asarray(actual, float) - np.asarray(forecast, float)
    return float(np.sqrt(np.mean(errors**2) / rmsse_scale(train)))


def smape_terms(actual: np.ndarray, forecast: np.ndarray) -> np.ndarray:
    """Per-point M4 sMAPE terms in percent; NaN where actual and forecast are both 0."""
    actual, forecast = np.asarray(actual, float), np.asarray(forecast, float)
    denominator = np.abs(actual) + np.abs(forecast)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(denominator > 0, 200.0 * np.abs(actual - forecast) / denominator, np.nan)


def smape(actual: np.ndarray, forecast: np.ndarray) -> float:
    """M4 sMAPE in percent."""
    return float(np.mean(smape_terms(actual, forecast)))


def interval_score(lower: np.ndarray, upper: np.ndarray, actual: np.ndarray,
                   level: float) -> np.ndarray:
    """Per-point interval score of central ``level`` % intervals."""
    lower, upper, actual = (np.asarray(a, float) for a in (lower, upper, actual))
    alpha = 1.0 - level / 100.0
    below = (2.0 / alpha) * (lower - actual) * (actual < lower)
    above = (2.0 / alpha) * (actual - upper) * (actual > upper)
    result: np.ndarray = (upper - lower) + below + above
    return result


def hits(lower: np.ndarray, upper: np.ndarray, actual: np.ndarray) -> np.ndarray:
    """1.0 where the actual lies inside [lower, upper], else 0.0."""
    actual = np.asarray(actual, float)
    return ((np.asarray(lower) <= actual) & (actual <= np.asarray(upper))).astype(float)


def msis(lower: np.ndarray, upper: np.ndarray, actual: np.ndarray, train: np.ndarray,
         m: int, level: float = 95) -> float:
    """Mean scaled interval score of one forecast path (M4 uses level 95)."""
    return float(np.mean(interval_score(lower, upper, actual, level)) / mase_scale(train, m))


def pinball(quantile: np.ndarray, actual: np.ndarray, tau: float) -> np.ndarray:
    """Per-point pinball loss of the ``tau``-quantile forecast ``quantile``."""
    diff = np.asarray(actual, float) - np.asarray(quantile, float)
    result: np.ndarray = diff * (tau - (diff < 0))
    return result


def crps_normal(mean: np.ndarray, sd: np.ndarray, actual: np.ndarray) -> np.ndarray:
    """Per-point CRPS of N(mean, sd^2); ``sd`` = 0 gives the absolute error, a NaN ``sd``
    NaN."""
    mean, sd, actual = (np.asarray(a, float) for a in (mean, sd, actual))
    safe = np.where(sd > 0, sd, 1.0)
    z = (actual - mean) / safe
    spread = safe * (z * (2.0 * stats.norm.cdf(z) - 1.0) + 2.0 * stats.norm.pdf(z)
                     - 1.0 / np.sqrt(np.pi))
    return np.where(sd > 0, spread, np.where(sd == 0, np.abs(actual - mean), np.nan))


def crps_quantiles(quantiles: np.ndarray, actual: np.ndarray) -> np.ndarray:
    """CRPS from a quantile function on the midpoint grid ``tau_k = (k - 1/2) / K``.

    ``quantiles[..., k]`` is the ``tau_k``-quantile (last axis, K of them); the CRPS is
    2 * integral of the pinball loss over tau, by the midpoint rule.
    """
    quantiles = np.asarray(quantiles, float)
    k = quantiles.shape[-1]
    taus = (np.arange(k) + 0.5) / k
    losses = pinball(quantiles, np.asarray(actual, float)[..., None], taus)
    result: np.ndarray = 2.0 * np.mean(losses, axis=-1)
    return result


def crps_sample(sample: np.ndarray, actual: float) -> float:
    """CRPS of the empirical distribution of ``sample`` (exact, O(n log n))."""
    x = np.sort(np.asarray(sample, float))
    n = len(x)
    spread = 2.0 * np.sum((2.0 * np.arange(1, n + 1) - n - 1) * x) / n**2
    return float(np.mean(np.abs(x - actual)) - spread / 2.0)
