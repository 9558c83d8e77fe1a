"""The fast estimator of the ets family: statsmodels' own search compiled, then polished.

The model, the likelihood, the parameters and their bounds are the reference path's
(statsmodels ``ETSModel`` with estimated initial states): L-BFGS-B (scipy) over
statsmodels' internal coordinates, ``0 < alpha < 1``, ``0 < beta / alpha < 1``,
``0 < gamma / (1 - alpha) < 1`` (each 1e-4 inside), ``0.8 <= phi <= 0.98``, initial states
free but the last initial seasonal state fixed at 0 (additive) or 1 (multiplicative),
from statsmodels' start values (its heuristic initial states, its default smoothing
parameters) or a previous estimate. The likelihood of the seasonal classes has several
modes and the path decides which one a search reaches, so the estimator first takes
statsmodels' own path, bit for bit, on compiled recursions (:mod:`.fast_ets_replay`): it
reaches the reference optimum itself. statsmodels stops at a loose tolerance, so a second
search continues from there with the exact gradient (:mod:`.fast_ets_kernel`, reverse
mode) to a strict stop, and its optimum is kept if it is higher. Both run scipy's
L-BFGS-B routine without its per-evaluation wrapper (:mod:`.lbfgsb_driver`).

Parameters come back under the ``ets`` family's (statsmodels') names, so forecasts and
intervals are computed by the reference path with them.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from backtest.models import fast_ets_kernel as kernel
from backtest.models import fast_ets_replay
from backtest.models.base import Fit, Params
from backtest.models.ets_start import TooShortError, initial_states
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
#: The polishing search's stopping rule (scipy's meaning): relative reduction of the
#: objective, projected gradient.
FTOL, GTOL = 1e-13, 1e-10
#: Log-likelihood the polish must gain to replace statsmodels' estimate (the validation
#: tolerance): a smaller gain is the stopping rule's noise on a flat likelihood, where
#: the parameters, and so the forecasts, can still move by 1e-4 relative; below it the
#: fast and the reference estimator give the same numbers.
POLISH_GAIN = 1e-6
#: Largest projected gradient (of minus the log-likelihood per observation, in the
#: optimiser's coordinates) accepted when the line search stops without a verdict:
#: statsmodels' own stopping threshold (scipy's ``pgtol`` default).
ACCEPTED_GRADIENT = 1e-5


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
    """statsmodels' start values, bit for bit: its default smoothing parameters and its
    initial states (:mod:`.ets_start`), the seasonal states scaled so that the last one
    is 1 (multiplicative) or shifted so that it is 0 (additive). The level is left as it
    is: statsmodels normalises its seasonal states in place when the model is built, so
    the level compensation its start-value code contains has nothing left to compensate
    when the optimiser starts."""
    try:
        level, trend, seasons = initial_states(y, form.trend, form.season, form.m)
    except TooShortError as error:
        raise FastEstimationError(f"no start values: {error}") from error
    params = {k: v for k, v in DEFAULT_SMOOTHING.items() if k in form.names}
    params["initial_level"] = level
    if form.trend:
        params["initial_trend"] = trend
    if form.season:
        seasons = seasons / seasons[-1] if form.season == "mul" else seasons - seasons[-1]
        params.update({f"initial_seasonal.{j}": float(v) for j, v in enumerate(seasons)})
    return params


def fast_estimate(spec: EtsSpec, y: np.ndarray, season_length: int,
                  start_params: Params | None = None) -> FastEtsFit:
    """Maximum likelihood estimates of ``spec`` on ``y``: statsmodels' own search from its
    start values or from ``start_params`` (:meth:`_Search.replay`: its estimate to the
    last bit), then polished with the exact gradient to a strict stop, the polished point
    kept if its log-likelihood is higher by more than :data:`POLISH_GAIN` (by at least
    0.01 on about one fold in five of the validation corpus). The estimate is therefore
    never below the reference optimum, and where the two optima agree to
    :data:`POLISH_GAIN` it is the reference estimate itself.

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
    start = search.start(start_values(y, form) if start_params is None else start_params)
    replayed, replayed_theta = search.replay(start)
    polished, polished_theta = search.polish(replayed_theta)
    gain = (replayed.fun - polished.fun) * len(y)  # in log-likelihood
    best, theta = ((polished, polished_theta) if gain > POLISH_GAIN
                   else (replayed, replayed_theta))
    llf = form.loglike(theta, y)
    if not math.isfinite(llf):
        raise FastEstimationError("the log-likelihood is not finite at the optimum")
    converged = best.converged or (best.line_search_failed
                                   and _stationary(best.x, best.jac, search.box))
    return FastEtsFit(form.named(theta), float(llf), converged,
                      replayed.iterations + polished.iterations,
                      replayed.evaluations + polished.evaluations)


class _Search:
    """The searches over the free parameters of one class on one window."""

    def __init__(self, form: EtsClass, y: np.ndarray) -> None:
        self.form, self.y, self.free = form, y, form.free
        self.box = Box.of(*np.array([_bounds(f) for f in self.free]).T)

    def start(self, params: Params) -> np.ndarray:
        """The internal vector of ``params``, its free entries moved into the bounds (as
        scipy moves statsmodels' start).

        Raises
        ------
        FastEstimationError
            If the likelihood is not finite there.
        """
        theta = self.form.internal(params)
        theta[self.free] = np.minimum(np.maximum(theta[self.free], self.box.lower),
                                      self.box.upper)
        if not math.isfinite(self.form.loglike(theta, self.y)):
            raise FastEstimationError("the log-likelihood is not finite at the start values")
        return theta

    def replay(self, start: np.ndarray) -> tuple[Minimum, np.ndarray]:
        """statsmodels' own search from the internal vector ``start``
        (:mod:`.fast_ets_replay`): its report and the internal vector where it stopped."""
        theta, form = start.copy(), self.form
        result = fast_ets_replay.replay(theta, self.y, form.m, form.multiplicative_error,
                                        form.season == "mul", self.free, self.box)
        theta[self.free] = result.x
        return result, theta

    def polish(self, start: np.ndarray) -> tuple[Minimum, np.ndarray]:
        """L-BFGS-B with the exact gradient from the internal vector ``start`` to the strict
        stop (:data:`FTOL`, :data:`GTOL`): its report and where it stopped."""
        theta, form = start.copy(), self.form
        args = (theta, self.y, form.m, form.multiplicative_error, form.season == "mul",
                self.free)
        result = minimize_bounded(kernel.objective, theta[self.free], self.box, args,
                                  ftol=FTOL, gtol=GTOL, max_iterations=MAX_ITERATIONS,
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
    """Compile (or load from the disk cache) the compiled functions of the estimator (the
    start's moving averages, the replay's lanes, the likelihood with its gradient) and the
    smoothing pass; returns the seconds it took."""
    began = time.perf_counter()
    y = 10.0 + np.sin(np.arange(24.0))
    for form in (EtsClass(False, True, False, "add", 4), EtsClass(True, True, True, "mul", 4)):
        search = _Search(form, y)
        replayed, theta = search.replay(search.start(start_values(y, form)))
        search.polish(theta)
        kernel.smoothing_pass(theta, y, form.m, form.season == "mul")
    return time.perf_counter() - began
