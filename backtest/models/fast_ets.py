"""The fast estimator of the ets family: the exact likelihood compiled, optimised by scipy.

The model, the likelihood, the parameters and their bounds are the reference path's
(statsmodels ``ETSModel`` with estimated initial states): L-BFGS-B (scipy) over
statsmodels' internal coordinates, ``0 < alpha < 1``, ``0 < beta / alpha < 1``,
``0 < gamma / (1 - alpha) < 1`` (each 1e-4 inside), ``0.8 <= phi <= 0.98``, initial states
free but the last initial seasonal state fixed at 0 (additive) or 1 (multiplicative),
from statsmodels' start values (its heuristic initial states, its default smoothing
parameters) or a previous estimate, in the same coordinates (the likelihood of the
seasonal classes has several modes, and the path decides which one is reached; a cold fit
also searches from a second start, see :func:`fast_estimate`). The
differences are the compiled likelihood with its exact gradient (:mod:`.fast_ets_kernel`;
statsmodels differentiates numerically), scipy's L-BFGS-B routine driven without its
per-evaluation wrapper (:mod:`.lbfgsb_driver`), and a tighter stopping rule.

Parameters come back under the ``ets`` family's (statsmodels') names, so forecasts and
intervals are computed by the reference path with them.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from backtest.models import fast_ets_kernel as kernel
from backtest.models.base import Fit, Params
from backtest.models.fast_fallback import FastEstimationError, fast_or_reference
from backtest.models.lbfgsb_driver import Box, Minimum, minimize_bounded

if TYPE_CHECKING:
    from backtest.models.ets import EtsSpec

#: statsmodels' default start values of the smoothing parameters (its ``ETSModel``).
DEFAULT_SMOOTHING = {"smoothing_level": 0.1, "smoothing_trend": 0.01,
                     "smoothing_seasonal": 0.01, "damping_trend": 0.98}
#: statsmodels' bounds: the smoothing parameters 1e-4 inside (0, 1), phi in [0.8, 0.98].
SMOOTHING_BOUNDS = (1e-4, 1 - 1e-4)
DAMPING_BOUNDS = (0.8, 0.98)
MAX_ITERATIONS = 1000
#: Correction pairs L-BFGS-B keeps (scipy's default), but never more than free parameters:
#: a non-seasonal class has two to five, and a memory beyond that doubles the cost of each
#: iteration's direction (the routine's compact matrices grow with it) without shortening
#: the search (measured: 29 and 30 iterations on Series G, ETS(A,Ad,N)).
CORRECTIONS = 10
#: Stopping rule (scipy's meaning): relative reduction of the objective, projected gradient.
FTOL, GTOL = 1e-13, 1e-10
#: The smoothing levels of the further starts, and their searches' stopping rule
#: (statsmodels' own: scipy's ``factr=1e7`` and ``pgtol=1e-5``).
OTHER_START_LEVELS = (0.5, 0.2)
SCREEN_FTOL, SCREEN_GTOL = 1e7 * float(np.finfo(float).eps), 1e-5
#: Largest projected gradient (of minus the log-likelihood per observation, in the
#: optimiser's coordinates) accepted when the line search stops without a verdict:
#: statsmodels' own stopping threshold (scipy's ``pgtol`` default).
ACCEPTED_GRADIENT = 1e-5
#: Least squares of ten values on an intercept and the times 1..10 (statsmodels' heuristic).
_LEVEL_TREND = np.linalg.pinv(np.column_stack([np.ones(10), np.arange(1.0, 11.0)]))


@dataclass(frozen=True)
class FastEtsFit:
    """Estimates under the ets family's names, the log-likelihood and the optimiser's
    report."""

    params: Params
    llf: float
    converged: bool
    iterations: int
    evaluations: int

    @property
    def rescaled_by(self) -> float:
        """The ets estimator works on the data as they are."""
        return 1.0


@dataclass(frozen=True)
class EtsClass:
    """The model class as the kernel takes it."""

    multiplicative_error: bool
    trend: bool
    damped: bool
    season: str | None  # "add", "mul" or None
    m: int

    @classmethod
    def of(cls, spec: EtsSpec, season_length: int) -> EtsClass:
        season = {"none": None, "additive": "add", "multiplicative": "mul"}[spec.season]
        return cls(spec.error == "multiplicative", spec.trend != "none",
                   spec.trend == "damped", season,
                   spec.season_period(season_length) if season else 1)

    @property
    def names(self) -> list[str]:
        """statsmodels' parameter names, in its order."""
        names = ["smoothing_level"]
        names += ["smoothing_trend"] * self.trend + ["smoothing_seasonal"] * bool(self.season)
        names += ["damping_trend"] * self.damped + ["initial_level"]
        names += ["initial_trend"] * self.trend
        if self.season:
            names += [f"initial_seasonal.{j}" for j in range(self.m)]
        return names

    @property
    def free(self) -> np.ndarray:
        """Internal indices the optimiser moves (the last seasonal state stays fixed)."""
        free = [kernel.ALPHA]
        free += [kernel.BETA_STAR] * self.trend + [kernel.GAMMA_STAR] * bool(self.season)
        free += [kernel.PHI] * self.damped + [kernel.LEVEL] + [kernel.TREND] * self.trend
        if self.season:
            free += [kernel.SEASONS + j for j in range(self.m - 1)]
        return np.array(free, dtype=np.int64)

    def internal(self, params: Params) -> np.ndarray:
        """statsmodels' internal vector (starred smoothing parameters) of ``params``."""
        theta = np.zeros(6 + self.m)
        alpha = params["smoothing_level"]
        theta[kernel.ALPHA] = alpha
        theta[kernel.PHI] = params["damping_trend"] if self.damped else 1.0
        theta[kernel.LEVEL] = params["initial_level"]
        if self.trend:
            theta[kernel.BETA_STAR] = params["smoothing_trend"] / alpha
            theta[kernel.TREND] = params["initial_trend"]
        if self.season:
            theta[kernel.GAMMA_STAR] = params["smoothing_seasonal"] / (1 - alpha)
            theta[kernel.SEASONS:] = [params[f"initial_seasonal.{j}"] for j in range(self.m)]
        return theta

    def named(self, theta: np.ndarray) -> Params:
        """``theta`` under statsmodels' names (smoothing parameters unstarred)."""
        alpha = float(theta[kernel.ALPHA])
        values = {"smoothing_level": alpha,
                  "smoothing_trend": float(theta[kernel.BETA_STAR] * alpha),
                  "smoothing_seasonal": float(theta[kernel.GAMMA_STAR] * (1 - alpha)),
                  "damping_trend": float(theta[kernel.PHI]),
                  "initial_level": float(theta[kernel.LEVEL]),
                  "initial_trend": float(theta[kernel.TREND])}
        values.update({f"initial_seasonal.{j}": float(theta[kernel.SEASONS + j])
                       for j in range(self.m)})
        return {name: values[name] for name in self.names}

    def loglike(self, theta: np.ndarray, y: np.ndarray) -> float:
        return kernel.loglike_gradient(theta, y, self.m, self.multiplicative_error,
                                       self.season == "mul", np.zeros(0, dtype=np.int64),
                                       np.zeros(0))


def start_values(y: np.ndarray, form: EtsClass) -> Params:
    """statsmodels' start values: its default smoothing parameters and its heuristic
    initial states (Hyndman & Athanasopoulos's simple rule below ``10 + 2 (m // 2)``
    observations), the seasonal states scaled so that the last one is 1 (multiplicative)
    or shifted so that it is 0 (additive). The level is left as it is: statsmodels
    normalises its seasonal states in place when the model is built, so the level
    compensation its start-value code contains has nothing left to compensate when the
    optimiser starts."""
    m = form.m
    if len(y) < 10 + 2 * (m // 2):
        level, trend, seasons = _simple_states(y, form)
    else:
        level, trend, seasons = _heuristic_states(y, form)
    params = {k: v for k, v in DEFAULT_SMOOTHING.items() if k in form.names}
    if form.season == "mul":
        seasons = seasons / seasons[-1]
    elif form.season == "add":
        seasons = seasons - seasons[-1]
    params["initial_level"] = float(level)
    if form.trend:
        params["initial_trend"] = float(trend)
    if form.season:
        params.update({f"initial_seasonal.{j}": float(v) for j, v in enumerate(seasons)})
    return params


def _simple_states(y: np.ndarray, form: EtsClass) -> tuple[float, float, np.ndarray]:
    m = form.m
    if not form.season:
        return y[0], y[1] - y[0], np.zeros(0)
    if len(y) < 2 * m:
        raise FastEstimationError("fewer than two seasonal cycles for the start values")
    level = float(np.mean(y[:m]))
    trend = float(np.mean((y[m:2 * m] - y[:m]) / m))
    seasons = y[:m] / level if form.season == "mul" else y[:m] - level
    return level, trend, seasons


def _heuristic_states(y: np.ndarray, form: EtsClass) -> tuple[float, float, np.ndarray]:
    """A centred moving average gives the seasonal states and, over its first ten values,
    the level and trend by least squares (statsmodels' ``_initialization_heuristic``)."""
    m = form.m
    seasons = np.zeros(0)
    smooth = y
    if form.season:
        if len(y) < 2 * m:
            raise FastEstimationError("fewer than two seasonal cycles for the start values")
        min_obs = 10 + 2 * (m // 2)
        cycles = max(min(5, len(y) // m), math.ceil(min_obs / m))
        part = y[:m * cycles]
        sums = np.concatenate([[0.0], np.cumsum(part)])
        moving = (sums[m:] - sums[:-m]) / m  # moving[k]: mean of part[k:k + m]
        if m % 2 == 0:
            smooth = (moving[:-1] + moving[1:]) / 2
            offset = m // 2
        else:
            smooth = moving
            offset = (m - 1) // 2
        trend_line = np.full(len(part), np.nan)
        trend_line[offset:offset + len(smooth)] = smooth
        detrended = part / trend_line if form.season == "mul" else part - trend_line
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            seasons = np.nanmean(detrended.reshape(cycles, m), axis=0)
        seasons = seasons / seasons.mean() if form.season == "mul" else seasons - seasons.mean()
    if len(smooth) < 10:
        raise FastEstimationError("fewer than ten smoothed values for the start values")
    level, trend = _LEVEL_TREND @ smooth[:10]
    return float(level), float(trend), seasons


def fast_estimate(spec: EtsSpec, y: np.ndarray, season_length: int,
                  start_params: Params | None = None) -> FastEtsFit:
    """Maximum likelihood estimates of ``spec`` on ``y``, from ``start_params`` if given,
    else from statsmodels' start values and, as further starts, the same with each of
    :data:`OTHER_START_LEVELS` as the smoothing level (the likelihood has several modes,
    and statsmodels' path and ours may reach different ones). The further searches stop
    at statsmodels' own tolerance and are refined only if they beat the best so far.

    Raises
    ------
    FastEstimationError
        If the likelihood is not finite at the start or at the optimum.
    """
    form = EtsClass.of(spec, season_length)
    y = np.ascontiguousarray(y, dtype=float)
    if not np.all(np.isfinite(y)):
        raise FastEstimationError("the window holds missing or non-finite values")
    if ((form.multiplicative_error or form.season == "mul") and np.any(y <= 0)):
        raise FastEstimationError("a multiplicative class needs strictly positive data")
    search = _Search(form, y)
    if start_params is not None:
        best, theta = search.run(start_params, FTOL, GTOL)
        iterations, evaluations = best.iterations, best.evaluations
    else:
        start = start_values(y, form)
        best, theta = search.run(start, FTOL, GTOL)
        iterations, evaluations = best.iterations, best.evaluations
        for level in OTHER_START_LEVELS:
            try:
                other, other_theta = search.run({**start, "smoothing_level": level},
                                                SCREEN_FTOL, SCREEN_GTOL)
            except FastEstimationError:  # no finite likelihood there: skipped
                continue
            iterations += other.iterations
            evaluations += other.evaluations
            if other.fun < best.fun:
                refined, refined_theta = search.run(form.named(other_theta), FTOL, GTOL)
                iterations += refined.iterations
                evaluations += refined.evaluations
                if refined.fun < best.fun:
                    best, theta = refined, refined_theta
    llf = form.loglike(theta, y)
    if not math.isfinite(llf):
        raise FastEstimationError("the log-likelihood is not finite at the optimum")
    converged = best.converged or (best.line_search_failed
                                   and _stationary(best.x, best.jac, search.box))
    return FastEtsFit(form.named(theta), float(llf), converged, iterations, evaluations)


class _Search:
    """L-BFGS-B over the free parameters of one class on one window."""

    def __init__(self, form: EtsClass, y: np.ndarray) -> None:
        self.form, self.y, self.free = form, y, form.free
        self.box = Box.of(*np.array([_bounds(f) for f in self.free]).T)

    def run(self, start: Params, ftol: float, gtol: float) -> tuple[Minimum, np.ndarray]:
        """The optimiser's report and the internal vector where it stopped."""
        theta = self.form.internal(start)
        theta[self.free] = np.minimum(np.maximum(theta[self.free], self.box.lower),
                                      self.box.upper)
        if not math.isfinite(self.form.loglike(theta, self.y)):
            raise FastEstimationError("the log-likelihood is not finite at the start values")
        form = self.form
        args = (theta, self.y, form.m, form.multiplicative_error, form.season == "mul",
                self.free)
        result = minimize_bounded(kernel.objective, theta[self.free], self.box, args,
                                  ftol=ftol, gtol=gtol, max_iterations=MAX_ITERATIONS,
                                  corrections=min(CORRECTIONS, len(self.free)))
        theta[self.free] = result.x
        return result, theta


def _bounds(index: int) -> tuple[float, float]:
    if index == kernel.PHI:
        return DAMPING_BOUNDS
    if index in (kernel.ALPHA, kernel.BETA_STAR, kernel.GAMMA_STAR):
        return SMOOTHING_BOUNDS
    return (-math.inf, math.inf)


def _stationary(x: np.ndarray, gradient: np.ndarray, box: Box) -> bool:
    """Whether the projected gradient is below :data:`ACCEPTED_GRADIENT`."""
    projected = np.clip(x - gradient, box.lower, box.upper) - x
    return bool(np.all(np.isfinite(projected)) and np.max(np.abs(projected)) < ACCEPTED_GRADIENT)


def fast_loglike(spec: EtsSpec, y: np.ndarray, season_length: int, params: Params) -> float:
    """The log-likelihood at given parameters (statsmodels' names and meaning)."""
    form = EtsClass.of(spec, season_length)
    return float(form.loglike(form.internal(params), np.ascontiguousarray(y, dtype=float)))


def fast_fit(spec: EtsSpec, y: np.ndarray, season_length: int,
             start_params: Params | None, keep_raw: bool) -> Fit:
    """The fast estimate as a :class:`Fit` marked ``estimator = 1``; if it fails or does
    not converge, a warning with the reason and the reference fit marked ``estimator = 0``
    (:func:`~.fast_fallback.fast_or_reference`).

    With ``keep_raw`` the fit carries statsmodels' results of a smoothing pass at the
    estimates, with the optimiser's report as ``mle_retvals``.
    """
    def smoothed(estimate: FastEtsFit) -> Any:
        model = spec.model(y, season_length)
        return model.smooth(np.array([estimate.params[n] for n in model.param_names]))

    return fast_or_reference(spec, y, season_length, start_params,
                             lambda: fast_estimate(spec, y, season_length, start_params),
                             smoothed if keep_raw else None)


def warm_up() -> float:
    """Compile (or load from the disk cache) the kernel's likelihood and smoothing pass;
    returns the seconds it took."""
    began = time.perf_counter()
    y = 10.0 + np.sin(np.arange(24.0))
    theta = np.array([0.3, 0.1, 0.1, 0.9, 10.0, 0.0, 1.1, 1.0, 0.9, 1.0])
    free = np.arange(9, dtype=np.int64)
    kernel.objective(theta[free], np.zeros(9), theta, y, 4, False, False, free)
    kernel.objective(theta[free], np.zeros(9), theta, y, 4, True, True, free)
    kernel.smoothing_pass(theta, y, 4, True)
    return time.perf_counter() - began
