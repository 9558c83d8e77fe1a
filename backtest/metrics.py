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
"""

from __future__ import annotations

import numpy as np


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
    return (upper - lower) + below + above


def hits(lower: np.ndarray, upper: np.ndarray, actual: np.ndarray) -> np.ndarray:
    """1.0 where the actual lies inside [lower, upper], else 0.0."""
    actual = np.asarray(actual, float)
    return ((np.asarray(lower) <= actual) & (actual <= np.asarray(upper))).astype(float)


def msis(lower: np.ndarray, upper: np.ndarray, actual: np.ndarray, train: np.ndarray,
         m: int, level: float = 95) -> float:
    """Mean scaled interval score of one forecast path (M4 uses level 95)."""
    return float(np.mean(interval_score(lower, upper, actual, level)) / mase_scale(train, m))
