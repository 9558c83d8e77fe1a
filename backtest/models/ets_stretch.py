"""ETS forecasts from many origins out of one smoothing pass, as statsmodels' ETSModel makes them.

With fixed parameters the exponential-smoothing recursions are causal: the states after
observation ``e-1`` and the one-step errors up to it are those of a run on ``y[:e]``. So
one smoothing pass over the longest series gives every origin its starting states, and
the scale, the mean squared (relative) one-step error, is rebuilt per origin from the
errors before it (it is concentrated out of the likelihood, so the full-series value
would be wrong for every earlier origin). From each origin the forecasts follow
statsmodels' ``ETSResults.simulate`` recursions (Hyndman et al. 2008, ch. 2), all origins
at once:

- point forecasts: the recursions with zero errors;
- intervals of the linear, additive-error classes (ANN, AAN, AAdN, ANA, AAA, AAdA): the
  analytic variance of Hyndman et al. (2008, table 6.1), ``scale * v(h)``;
- intervals of the other classes: empirical quantiles of simulated paths, each origin's
  errors drawn from its own seed exactly as statsmodels draws them.

The trend is additive or damped (this project's ETS family has no multiplicative trend).

References
----------
Hyndman, R. J., Koehler, A. B., Ord, J. K. and Snyder, R. D. (2008). *Forecasting with
Exponential Smoothing: The State Space Approach*. Springer.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

#: Origins simulated together; bounds the memory of the simulated paths.
_BLOCK = 32


@dataclass(frozen=True)
class EtsForm:
    """The model class, statsmodels' smoothing parameters and the seasonal period
    (1 without a season, where the seasonal state is the constant 0)."""

    multiplicative_error: bool
    multiplicative_season: bool
    period: int
    alpha: float
    beta: float
    gamma: float
    phi: float

    @property
    def linear(self) -> bool:
        """Whether the class has an analytic forecast variance (additive error and season)."""
        return not (self.multiplicative_error or self.multiplicative_season)


@dataclass(frozen=True)
class OriginStates:
    """At each origin: level, trend, the last ``period`` seasonal states (oldest first) and
    the scale from the one-step errors before the origin."""

    level: np.ndarray
    trend: np.ndarray
    seasons: np.ndarray
    scale: np.ndarray


def origin_states(form: EtsForm, y: np.ndarray, fitted: np.ndarray, states: np.ndarray,
                  initial_seasons: np.ndarray, ends: Sequence[int]) -> OriginStates:
    """States and scales at ``ends`` from one smoothing pass.

    Parameters
    ----------
    form : the model.
    y, fitted : observations and one-step predictions of the pass.
    states : the states after each observation, shape ``(len(y), 3)``: level, trend and
        the new seasonal state, 0 for a component the class lacks
        (:func:`~.fast_ets_kernel.smoothing_pass`).
    initial_seasons : the ``form.period`` seasonal states before the first observation,
        oldest first (``[0]`` without a season).
    ends : origins as numbers of observations.
    """
    at = np.asarray(ends, dtype=int)
    errors = (y - fitted) / fitted if form.multiplicative_error else y - fitted
    scale = np.cumsum(errors**2)[at - 1] / at
    history = np.concatenate([initial_seasons, states[:, 2]])
    seasons = history[at[:, None] + np.arange(form.period)]
    return OriginStates(states[at - 1, 0], states[at - 1, 1], seasons, scale)


def point_forecasts(form: EtsForm, states: OriginStates, horizon: int) -> np.ndarray:
    """Forecast means, shape ``(n_origins, horizon)``: the recursions without errors."""
    zeros = np.zeros((len(states.level), horizon, 1))
    return _paths(form, states, zeros)[..., 0]


def relative_variance(form: EtsForm, horizon: int) -> np.ndarray:
    """``v(h)``, h = 1..horizon, of a linear class: the forecast variance over the scale
    (Hyndman et al. 2008, table 6.1, in statsmodels' arrangement of the terms)."""
    h = np.arange(1, horizon + 1, dtype=float)
    a, b, g, phi, m = form.alpha, form.beta, form.gamma, form.phi, form.period
    k = np.asarray((h - 1) / m, dtype=int)
    if phi == 1.0:
        out = 1 + (h - 1) * (a**2 + a * b * h + b**2 / 6 * h * (2 * h - 1))
    else:
        out = (1 + a**2 * (h - 1)
               + (b * phi * h) / ((1 - phi) ** 2) * (2 * a * (1 - phi) + b * phi)
               - (b * phi * (1 - phi**h)) / ((1 - phi) ** 2 * (1 - phi**2))
               * (2 * a * (1 - phi**2) + b * phi * (1 + 2 * phi - phi**h)))
    if m == 1:
        return out
    if phi == 1.0:
        return out + g * k * (2 * a + g + b * m * (k + 1))
    return (out + g * k * (2 * a + g)
            + (2 * b * g * phi) / ((1 - phi) * (1 - phi**m))
            * (k * (1 - phi**m) - phi**m * (1 - phi ** (m * k))))


def simulated_bounds(form: EtsForm, states: OriginStates, horizon: int,
                     levels: tuple[int, ...], seeds: Sequence[int], repetitions: int
                     ) -> tuple[dict[int, np.ndarray], dict[int, np.ndarray], np.ndarray]:
    """Central interval bounds per level, shape ``(n_origins, horizon)`` each, and the
    paths they come from, ``(n_origins, horizon, repetitions)``; origin i's errors come
    from ``numpy.random.default_rng(seeds[i])``."""
    blocks = [_block_paths(form, _take(states, slice(i, i + _BLOCK)), horizon,
                           seeds[i:i + _BLOCK], repetitions)
              for i in range(0, len(seeds), _BLOCK)]
    paths = np.concatenate(blocks)
    lower, upper = {}, {}
    for level in levels:
        alpha = 1 - level / 100
        lower[level] = np.quantile(paths, alpha / 2, axis=-1)
        upper[level] = np.quantile(paths, 1 - alpha / 2, axis=-1)
    return lower, upper, paths


def _block_paths(form: EtsForm, states: OriginStates, horizon: int, seeds: Sequence[int],
                 repetitions: int) -> np.ndarray:
    sigma = np.sqrt(states.scale)[:, None, None]
    draws = np.stack([np.random.default_rng(seed).standard_normal((horizon, repetitions))
                      for seed in seeds])
    return _paths(form, states, draws * sigma)


def _take(states: OriginStates, rows: slice) -> OriginStates:
    return OriginStates(states.level[rows], states.trend[rows], states.seasons[rows],
                        states.scale[rows])


def _paths(form: EtsForm, states: OriginStates, errors: np.ndarray) -> np.ndarray:
    """Simulated observations, shape ``(n_origins, horizon, repetitions)``.

    The operations and their order are statsmodels' (``ETSResults.simulate``), so that
    the results agree with it to rounding; it rebuilds beta and gamma from the starred
    parameters its smoother uses.
    """
    n, horizon, reps = errors.shape
    m = form.period
    beta = form.alpha * (form.beta / form.alpha)
    gamma = (1 - form.alpha) * (form.gamma / (1 - form.alpha))
    level = np.repeat(states.level[:, None], reps, axis=1)
    trend = np.repeat(states.trend[:, None], reps, axis=1)
    history = np.empty((m + horizon, n, reps))
    history[:m] = np.moveaxis(states.seasons, 1, 0)[..., None]
    out = np.empty((n, horizon, reps))
    for t in range(horizon):
        e = errors[:, t, :]
        grown = trend * form.phi
        base = level + grown
        season = history[t]
        if form.multiplicative_season:
            expected = base * season
            kappa_l, kappa_s = (0, 0) if form.multiplicative_error else (1 / season, 1 / base)
        else:
            expected = base + season
            kappa_l, kappa_s = (season, base) if form.multiplicative_error else (1, 1)
        if form.multiplicative_error:
            out[:, t] = expected + expected * e
            level_new = base + form.alpha * (base + kappa_l) * e
            trend = grown + beta * (grown + (kappa_l + level)) * e
            history[t + m] = season + gamma * (season + kappa_s) * e
        else:
            out[:, t] = expected + e
            level_new = base + form.alpha * kappa_l * e
            trend = grown + beta * kappa_l * e
            history[t + m] = season + gamma * kappa_s * e
        level = level_new
    return out
