"""statsmodels' initial states of an ETS model (``ETSModel``'s ``"estimated"``
initialisation starts its search there), bit for bit, without its pandas overhead.

Two rules, as statsmodels applies them: with at least ``10 + 2 (m // 2)`` observations its
heuristic (Hyndman & Athanasopoulos's: a centred moving average of up to five seasonal
cycles gives the seasonal states, and a least-squares line through the first ten averages
the level and trend), else the simple rule (the first cycle's mean and its seasonal
deviations; the first two observations without a season). The moving averages are
pandas' rolling means, reproduced with their compensated running sums
(:func:`_rolling_mean`); everything else makes statsmodels' numpy calls on arrays of the
same layout. The replay of statsmodels' search (:mod:`.fast_ets_replay`) needs the start
to the last bit; calling statsmodels' own functions costs about ten times more (0.3 ms
per seasonal fit, most of it building pandas objects).

References
----------
Hyndman, R. J. and Athanasopoulos, G. (2021). *Forecasting: Principles and Practice*,
3rd ed., OTexts, sections 8.4-8.6.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from backtest.models.compiled import njit

#: Least squares of ten values on an intercept and the times 1..10, as statsmodels forms it.
_LINE = np.linalg.pinv(np.c_[np.ones(10), np.arange(10) + 1])


class TooShortError(ValueError):
    """The window is too short for the rule statsmodels would apply."""


def initial_states(y: np.ndarray, trend: bool, season: str | None, m: int
                   ) -> tuple[float, float, np.ndarray]:
    """The level, the trend (0 without one) and the ``m`` seasonal states (empty without
    a season: ``season`` is ``"add"``, ``"mul"`` or None) statsmodels starts from on the
    window ``y`` (float64, contiguous)."""
    if len(y) < 10 + 2 * (m // 2):
        return _simple(y, trend, season, m)
    return _heuristic(y, trend, season, m)


def _simple(y: np.ndarray, trend: bool, season: str | None, m: int
            ) -> tuple[float, float, np.ndarray]:
    if not season:
        if len(y) < 2:
            raise TooShortError("fewer than two observations")
        return float(y[0]), float(y[1] - y[0]) if trend else 0.0, np.zeros(0)
    if len(y) < 2 * m:
        raise TooShortError("fewer than two seasonal cycles")
    level = np.mean(y[:m])
    slope = float(np.sum((y[m:2 * m] - y[:m]) / m) / m) if trend else 0.0
    seasons = y[:m] / level if season == "mul" else y[:m] - level
    return float(level), slope, seasons


def _heuristic(y: np.ndarray, trend: bool, season: str | None, m: int
               ) -> tuple[float, float, np.ndarray]:
    smooth, seasons = y, np.zeros(0)
    if season:
        if len(y) < 2 * m:
            raise TooShortError("fewer than two seasonal cycles")
        cycles = max(min(5, len(y) // m), int(np.ceil((10 + 2 * (m // 2)) / m)))
        part = y[:m * cycles]
        line = _rolling_mean(part, m, (m - 1) // 2)
        if m % 2 == 0:
            shifted = np.append(line[1:], np.nan)
            line = _rolling_mean(shifted, 2, 0)
        detrended = part / line if season == "mul" else part - line
        padded = np.full(cycles * m, np.nan)
        padded[:len(detrended)] = detrended
        with warnings.catch_warnings():  # a cycle position without values: NaN, as in statsmodels
            warnings.simplefilter("ignore", RuntimeWarning)
            seasons = np.nanmean(padded.reshape(cycles, m).T, axis=1)
        if season == "mul":
            seasons /= np.mean(seasons)
        else:
            seasons -= np.mean(seasons)
        smooth = line[~np.isnan(line)]
    if len(smooth) < 10:
        raise TooShortError("fewer than ten smoothed values")
    level, slope = np.squeeze(_LINE.dot(np.atleast_2d(smooth).T[:10]))
    return float(level), float(slope) if trend else 0.0, seasons


@njit
def _rolling_mean(values: np.ndarray, window: int, offset: int) -> np.ndarray:
    """pandas' ``Series.rolling(window, center=offset > 0).mean()`` (window ``i`` covers
    ``[i + 1 + offset - window, i + 1 + offset)`` within the data, at least ``window``
    values, NaN skipped), with its arithmetic: a running sum with Kahan compensation,
    separate for added and removed values, and a window of identical values giving that
    value."""
    n = values.shape[0]
    out = np.empty(n)
    total, added, removed, prev = 0.0, 0.0, 0.0, 0.0
    count = negatives = same = 0
    last_start = last_end = 0
    for i in range(n):
        end = min(max(i + 1 + offset, 0), n)
        start = min(max(i + 1 + offset - window, 0), n)
        if i == 0 or start >= last_end:  # a fresh window
            total, added, removed = 0.0, 0.0, 0.0
            count = negatives = same = 0
            prev = values[start] if start < n else math.nan
            first_new = start
        else:
            for j in range(last_start, start):
                value = values[j]
                if value == value:
                    count -= 1
                    step = -value - removed
                    moved = total + step
                    removed = moved - total - step
                    total = moved
                    negatives -= math.copysign(1.0, value) < 0
            first_new = last_end
        for j in range(first_new, end):
            value = values[j]
            if value == value:
                count += 1
                step = value - added
                moved = total + step
                added = moved - total - step
                total = moved
                negatives += math.copysign(1.0, value) < 0
                same = same + 1 if value == prev else 1
                prev = value
        if count >= window:
            mean = total / count
            if same >= count:
                mean = prev
            elif (negatives == 0 and mean < 0) or (negatives == count and mean > 0):
                mean = 0.0  # a mean of one sign
            out[i] = mean
        else:
            out[i] = math.nan
        last_start, last_end = start, end
    return out
