"""The fast estimator of the arima family: exact maximum likelihood with a compiled filter.

The model is the reference path's (statsmodels ``ARIMA``, regression with ARIMA errors):
``y_t - beta x_t`` follows ARIMA(p,d,q)(P,D,Q)[s], ``x_t`` being 1 (constant) or
``t + 1`` (drift, statsmodels' trend offset). Differencing ``y`` and ``x`` d times and
seasonally D times leaves a stationary ARMA around ``beta`` times the differenced
regressor, whose exact likelihood (:mod:`.fast_arima_kernel`) is the reference path's
likelihood with its differenced states diffuse (over ``n - d - D s`` observations, the
reference's effective sample). ``beta`` and the innovation variance are concentrated out,
so L-BFGS-B (scipy's routine, driven without its per-evaluation wrapper by
:mod:`.lbfgsb_driver`) searches only the ARMA coefficients, in the unconstrained
coordinates of Monahan's map, as the reference does. The start is the previous estimate when given,
else zero and a Hannan-Rissanen regression (Hannan & Rissanen 1982: a long
autoregression's residuals as regressors of the moving-average terms): both for models
mixing AR and MA terms, whose likelihood is often multimodal, else the better of the two.

Data of extreme scale are rescaled by the reference path's rule
(:meth:`~.arima.ArimaSpec.rescaling`: a power of two, when the differenced data's spread
lies outside [1e-2, 1e3]): the estimate is made on the rescaled data and mapped back
exactly, the constant or drift divided by the factor, the variance by its square, and the
log-likelihood, over ``n`` differenced observations, raised by ``n log(factor)``. The
profile likelihood changes by a constant under rescaling, but the optimiser's relative
stopping rule and its difference quotients do not, so the same data in other units get
the same coefficients only this way.

Parameters come back under the ``arima`` family's names, so forecasts, intervals and
assessments are computed by the reference path with them.

References
----------
Hannan, E. J. and Rissanen, J. (1982). Recursive estimation of mixed autoregressive-moving
average order. *Biometrika* 69(1), 81-94.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from statsmodels.tsa.statespace.tools import unconstrain_stationary_univariate

from backtest.models import fast_arima_kernel as kernel
from backtest.models.base import Fit, Params
from backtest.models.differencing import difference
from backtest.models.fast_fallback import FastEstimationError, fast_or_reference
from backtest.models.lbfgsb_driver import Box, Minimum, minimize_bounded

if TYPE_CHECKING:
    from backtest.models.arima import ArimaSpec

#: L-BFGS-B iterations allowed per fit.
MAX_ITERATIONS = 200
#: Central-difference step in the unconstrained coordinates.
GRADIENT_STEP = 1e-6
#: Stopping rule (scipy's meaning): relative reduction of the objective, projected gradient.
FTOL, GTOL = 1e-13, 1e-8
#: The order search's stopping rule: the objective is the log-likelihood per observation,
#: so the criterion of a stopped fit is within about 1e-8 of the strict stop's; the strict
#: rule's last iterations buy nothing a comparison of criteria can see, and its line search
#: sometimes fails there (a fallback to the reference estimator).
SEARCH_FTOL, SEARCH_GTOL = 1e-11, 1e-7
#: Largest projected gradient (of minus the log-likelihood per observation, in the
#: unconstrained coordinates) accepted when the line search stops without a verdict:
#: statsmodels' own stopping threshold (scipy's ``pgtol`` default), which the reference
#: estimate meets.
ACCEPTED_GRADIENT = 1e-5
#: Unconstrained values beyond this put a coefficient within 1e-8 of the unit circle.
_BOUND = 1e4


@dataclass(frozen=True)
class FastFit:
    """Estimates under the arima family's names, the log-likelihood and the optimiser's
    report, all on the original scale; ``rescaled_by`` is the factor the data were
    multiplied by for the search."""

    params: Params
    llf: float
    nobs: int
    converged: bool
    iterations: int
    evaluations: int
    rescaled_by: float = 1.0


@dataclass(frozen=True)
class DifferencedProblem:
    """The differenced data and regressor, with the orders, as the kernel takes them."""

    w: np.ndarray
    reg: np.ndarray
    orders: tuple[int, int, int, int, int]
    has_mean: bool

    @classmethod
    def of(cls, spec: ArimaSpec, y: np.ndarray, season_length: int) -> DifferencedProblem:
        p, d, q = spec.order
        big_p, big_d, big_q = spec.seasonal or (0, 0, 0)
        s = spec.season_period(season_length) if spec.seasonal else 1
        y = np.asarray(y, dtype=float)
        if not np.all(np.isfinite(y)):
            raise FastEstimationError("the window holds missing or non-finite values")
        w = difference(y, d, big_d, s)
        if spec.deterministic == "none":
            reg = np.zeros_like(w)
        else:
            base = np.ones(len(y)) if spec.deterministic == "constant" else np.arange(
                1.0, len(y) + 1.0)
            reg = difference(base, d, big_d, s)
        if len(w) < 1:
            raise FastEstimationError("nothing is left after differencing")
        return cls(np.ascontiguousarray(w), np.ascontiguousarray(reg),
                   (p, q, big_p, big_q, s), spec.deterministic != "none")

    def loglike(self, x: np.ndarray) -> tuple[float, float, float]:
        return kernel.profile_loglike(x, self.w, self.reg, *self.orders)


def fast_estimate(spec: ArimaSpec, y: np.ndarray, season_length: int,
                  start_params: Params | None = None, *, screening: bool = False) -> FastFit:
    """Maximum likelihood estimates of ``spec`` on ``y``; ``screening`` stops the optimiser
    at the order search's precision.

    Raises
    ------
    FastEstimationError
        If the likelihood is not finite at the start or at the optimum.
    """
    factor = spec.rescaling(y, season_length)
    problem = DifferencedProblem.of(spec, np.asarray(y, dtype=float) * factor, season_length)
    p, q, big_p, big_q, s = problem.orders
    k = p + q + big_p + big_q
    if k == 0:
        x, converged, iterations, evaluations = np.zeros(0), True, 0, 1
    else:
        starts = ([_warm_start(spec, start_params, season_length)] if start_params is not None
                  else _cold_starts(problem))
        starts = [x0 for x0 in starts if math.isfinite(problem.loglike(x0)[0])]
        if not starts:
            raise FastEstimationError("the log-likelihood is not finite at the start values")
        ftol, gtol = (SEARCH_FTOL, SEARCH_GTOL) if screening else (FTOL, GTOL)
        box = Box.of(np.full(k, -_BOUND), np.full(k, _BOUND))
        results = [minimize_bounded(kernel.objective, x0, box,
                                    (problem.w, problem.reg, *problem.orders, GRADIENT_STEP),
                                    ftol=ftol, gtol=gtol, max_iterations=MAX_ITERATIONS)
                   for x0 in starts]
        best = min(results, key=lambda r: r.fun)
        x, converged = best.x, _accepted(best, _BOUND)
        iterations = sum(r.iterations for r in results)
        evaluations = sum(r.evaluations for r in results)
    llf, beta, sigma2 = problem.loglike(x)
    if not (math.isfinite(llf) and sigma2 > 0):
        raise FastEstimationError("the log-likelihood is not finite at the optimum")
    n = len(problem.w)
    return FastFit(_named(spec, x, beta / factor, sigma2 / factor**2, season_length),
                   float(llf + n * math.log(factor)), n, converged, iterations, evaluations,
                   factor)


def fast_loglike(spec: ArimaSpec, y: np.ndarray, season_length: int, params: Params) -> float:
    """The exact log-likelihood at given parameters (named as the arima family names them,
    ``sigma2`` and any ``constant``/``drift`` included), nothing concentrated out."""
    problem = DifferencedProblem.of(spec, y, season_length)
    p, q, big_p, big_q, s = problem.orders
    names = coefficient_names(spec, season_length)
    coefficients = [np.array([params[n] for n in group], dtype=float) for group in names]
    phi, theta, big_phi, big_theta = coefficients
    ar, ma = kernel.multiply(phi, theta, big_phi, big_theta, s)
    beta = params.get(spec.deterministic, 0.0)
    sum_log_f, s_ww, _, _ = kernel.filter_sums(problem.w - beta * problem.reg,
                                               np.zeros_like(problem.w), ar, ma)
    n, sigma2 = len(problem.w), params["sigma2"]
    return float(-0.5 * n * math.log(2 * math.pi * sigma2) - 0.5 * sum_log_f
                 - 0.5 * s_ww / sigma2)


def warm_up() -> float:
    """Compile (or load from the disk cache) the kernel; returns the seconds it took."""
    began = time.perf_counter()
    w = np.sin(np.arange(30.0))
    kernel.objective(np.zeros(2), np.zeros(2), w, np.ones(30), 1, 0, 1, 0, 4, GRADIENT_STEP)
    kernel.profile_loglike(np.zeros(2), w, np.zeros(30), 0, 1, 0, 1, 4)
    kernel.multiply(np.zeros(1), np.zeros(1), np.zeros(1), np.zeros(1), 4)
    kernel.filter_sums(w, np.zeros(30), np.zeros(1), np.zeros(1))
    return time.perf_counter() - began


def coefficient_names(spec: ArimaSpec, season_length: int) -> tuple[list[str], ...]:
    """statsmodels' names of the AR, MA, seasonal AR and seasonal MA coefficients."""
    p, _, q = spec.order
    big_p, _, big_q = spec.seasonal or (0, 0, 0)
    s = spec.season_period(season_length) if spec.seasonal else 1
    return ([f"ar.L{i}" for i in range(1, p + 1)], [f"ma.L{i}" for i in range(1, q + 1)],
            [f"ar.S.L{s * i}" for i in range(1, big_p + 1)],
            [f"ma.S.L{s * i}" for i in range(1, big_q + 1)])


def _named(spec: ArimaSpec, x: np.ndarray, beta: float, sigma2: float,
           season_length: int) -> Params:
    p, _, q = spec.order
    big_p, _, big_q = spec.seasonal or (0, 0, 0)
    cuts = np.cumsum([p, q, big_p, big_q])
    values = (kernel.constrain(x[:cuts[0]]), -kernel.constrain(x[cuts[0]:cuts[1]]),
              kernel.constrain(x[cuts[1]:cuts[2]]), -kernel.constrain(x[cuts[2]:cuts[3]]))
    out: Params = {}
    if spec.deterministic != "none":
        out[spec.deterministic] = float(beta)
    for names, group in zip(coefficient_names(spec, season_length), values):
        out.update({name: float(v) for name, v in zip(names, group)})
    out["sigma2"] = float(sigma2)
    return out


def _warm_start(spec: ArimaSpec, params: Params, season_length: int) -> np.ndarray:
    """Unconstrained coordinates of a previous estimate (coefficients pulled just inside
    the unit circle when on it)."""
    parts = []
    for sign, names in zip((1, -1, 1, -1), coefficient_names(spec, season_length)):
        if names:
            values = sign * np.array([params[n] for n in names], dtype=float)
            parts.append(unconstrain_stationary_univariate(0.999 * values))
    result: np.ndarray = np.clip(np.concatenate(parts), -_BOUND, _BOUND)
    return result


def _cold_starts(problem: DifferencedProblem) -> list[np.ndarray]:
    """Start values: zero and the Hannan-Rissanen estimates (when admissible). A model with
    both autoregressive and moving-average terms, whose likelihood often has more than one
    mode, is optimised from both; otherwise from the one with the higher likelihood."""
    p, q, big_p, big_q, s = problem.orders
    zero = np.zeros(p + q + big_p + big_q)
    guess = _hannan_rissanen(problem)
    if guess is None:
        return [zero]
    if p + big_p > 0 and q + big_q > 0:
        return [zero, guess]
    return [guess if problem.loglike(guess)[0] > problem.loglike(zero)[0] else zero]


def _hannan_rissanen(problem: DifferencedProblem) -> np.ndarray | None:
    """Non-seasonal and seasonal ARMA coefficients by two least-squares regressions
    (the seasonal part on lags that are multiples of s), ``None`` if inadmissible."""
    p, q, big_p, big_q, s = problem.orders
    w = problem.w - (problem.w.mean() if problem.has_mean else 0.0)
    n = len(w)
    long_order = min(max(p + big_p * s, q + big_q * s) + 4, n // 3)
    if long_order < 1 or n - long_order < 2 * (p + q + big_p + big_q) + 4:
        return None
    lagged = np.column_stack([w[long_order - k:n - k] for k in range(1, long_order + 1)])
    coef, *_ = np.linalg.lstsq(lagged, w[long_order:], rcond=None)
    resid = np.zeros(n)
    resid[long_order:] = w[long_order:] - lagged @ coef
    lags = ([(w, k) for k in range(1, p + 1)] + [(resid, k) for k in range(1, q + 1)]
            + [(w, s * k) for k in range(1, big_p + 1)]
            + [(resid, s * k) for k in range(1, big_q + 1)])
    start = long_order + max(lag for _, lag in lags)
    if n - start < len(lags) + 2:
        return None
    design = np.column_stack([series[start - lag:n - lag] for series, lag in lags])
    estimates, *_ = np.linalg.lstsq(design, w[start:], rcond=None)
    cuts = np.cumsum([p, q, big_p, big_q])
    groups = (estimates[:cuts[0]], -estimates[cuts[0]:cuts[1]], estimates[cuts[1]:cuts[2]],
              -estimates[cuts[2]:cuts[3]])
    if any(len(g) and np.max(np.abs(np.roots(np.r_[1.0, -g]))) > 0.98 for g in groups):
        return None
    with np.errstate(all="ignore"):
        x = np.concatenate([unconstrain_stationary_univariate(g) for g in groups if len(g)])
    if not np.all(np.isfinite(x)) or np.any(np.abs(x) > 10.0):
        return None
    return x


def _accepted(result: Minimum, bound: float) -> bool:
    """Converged, or the line search stopped where the projected gradient is below
    :data:`ACCEPTED_GRADIENT` (the finite-difference gradient's noise near the optimum)."""
    if result.converged:
        return True
    projected = np.clip(result.x - result.jac, -bound, bound) - result.x
    return bool(result.line_search_failed and np.all(np.isfinite(projected))
                and np.max(np.abs(projected), initial=0.0) < ACCEPTED_GRADIENT)


def fast_fit(spec: ArimaSpec, y: np.ndarray, season_length: int,
             start_params: Params | None, keep_raw: bool) -> Fit:
    """The fast estimate as a :class:`Fit` marked ``estimator = 1`` (converged, with its
    rescaling factor); if it fails or does not converge, a warning with the reason and the
    reference fit marked ``estimator = 0`` (:func:`~.fast_fallback.fast_or_reference`).

    With ``keep_raw`` the fit carries statsmodels' results of a filter pass at the
    estimates, with the optimiser's report as ``mle_retvals``.
    """
    return fast_or_reference(
        spec, y, season_length, start_params,
        lambda: fast_estimate(spec, y, season_length, start_params),
        (lambda e: spec.results_at(y, season_length, e.params)) if keep_raw else None)
