"""The four benchmark methods on many training windows of one series at once.

Every window statistic the methods need (a sum, a sum of squares) is a difference of two
cumulative sums over the series, so all windows cost one pass. Sums of squares about a
window's own mean or slope are taken about a fixed reference first (the series' first
value or first difference, which every window can see) and then corrected, which keeps
the rounding error at the level of the data's spread rather than its size. A cumulative
sum up to ``t`` reads nothing after ``t``, so no window sees later data.
Formulas: see :mod:`backtest.models.benchmarks`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class WindowForecasts:
    """Means and standard deviations ``(n_windows, horizon)`` and each parameter per window."""

    mean: np.ndarray
    sd: np.ndarray
    params: dict[str, np.ndarray]


def window_forecasts(method: str, y: np.ndarray, season_length: int, starts: np.ndarray,
                     ends: np.ndarray, horizon: int) -> WindowForecasts:
    """Forecasts of ``method`` from the end of every window ``y[starts[i]:ends[i]]``."""
    h = np.arange(1, horizon + 1)
    n = (ends - starts)[:, None]
    if method == "mean":
        return _mean(y, starts, ends, n, horizon)
    if method == "naive":
        s = np.sqrt(_window_sum(np.diff(y) ** 2, starts, ends - 1) / (n[:, 0] - 1))
        mean = np.repeat(y[ends - 1][:, None], horizon, axis=1)
        return WindowForecasts(mean, s[:, None] * np.sqrt(h), {"sigma": s})
    if method == "drift":
        return _drift(y, starts, ends, n, h)
    return _seasonal_naive(y, season_length, starts, ends, n, h)


def _window_sum(values: np.ndarray, starts: np.ndarray, stops: np.ndarray) -> np.ndarray:
    """``values[starts[i]:stops[i]].sum()`` for every i."""
    total = np.concatenate([[0.0], np.cumsum(values)])
    result: np.ndarray = total[stops] - total[starts]
    return result


def _mean(y: np.ndarray, starts: np.ndarray, ends: np.ndarray, n: np.ndarray,
          horizon: int) -> WindowForecasts:
    centred = y - y[0]
    offset = _window_sum(centred, starts, ends) / n[:, 0]
    squares = _window_sum(centred**2, starts, ends) - n[:, 0] * offset**2
    s = np.sqrt(np.maximum(squares, 0.0) / (n[:, 0] - 1))
    level = offset + y[0]
    mean = np.repeat(level[:, None], horizon, axis=1)
    sd = np.repeat((s * np.sqrt(1 + 1 / n[:, 0]))[:, None], horizon, axis=1)
    return WindowForecasts(mean, sd, {"mean": level, "sigma": s})


def _drift(y: np.ndarray, starts: np.ndarray, ends: np.ndarray, n: np.ndarray,
           h: np.ndarray) -> WindowForecasts:
    steps = np.diff(y)
    slope = (y[ends - 1] - y[starts]) / (n[:, 0] - 1)
    centred = steps - steps[0]
    squares = (_window_sum(centred**2, starts, ends - 1)
               - (n[:, 0] - 1) * (slope - steps[0]) ** 2)
    s = np.sqrt(np.maximum(squares, 0.0) / (n[:, 0] - 2))
    mean = y[ends - 1][:, None] + h * slope[:, None]
    return WindowForecasts(mean, s[:, None] * np.sqrt(h * (1 + h / n)),
                           {"drift": slope, "sigma": s})


def _seasonal_naive(y: np.ndarray, m: int, starts: np.ndarray, ends: np.ndarray,
                    n: np.ndarray, h: np.ndarray) -> WindowForecasts:
    # Lag-m differences y[t] - y[t-m] sit at index t - m.
    s = np.sqrt(_window_sum((y[m:] - y[:-m]) ** 2, starts, ends - m) / (n[:, 0] - m))
    k = (h - 1) // m
    mean = y[ends[:, None] + h - 1 - m * (k + 1)]
    return WindowForecasts(mean, s[:, None] * np.sqrt(k + 1), {"sigma": s})
