"""statsmodels' own ETS search, replayed on the compiled recursions: the reference optimum,
bit for bit, at a fraction of its cost.

statsmodels' ``ETSModel.fit`` runs scipy's L-BFGS-B (``fmin_l_bfgs_b`` with its defaults:
10 correction pairs, ``factr = 1e7``, ``pgtol = 1e-5``, at most 15,000 likelihood values,
statsmodels' 1,000 iterations) on minus the log-likelihood per observation, its gradient
by forward differences (scipy's ``approx_derivative``). The seasonal likelihoods have
several modes, and which one a search reaches depends on its path to the last bit, so the
fast estimator takes the same path: the same start (:func:`.fast_ets.start_values`), the
same routine (:mod:`.lbfgsb_driver`), the same difference steps, and likelihood values
equal to statsmodels' to the last bit. For the values: the smoother's operations in its
order (:func:`.fast_ets_kernel.advance`), the squared errors summed in numpy's pairwise
order, and numpy's own logarithm (numpy picks a vectorised logarithm for the processor it
runs on, which can differ from the C library's in the last bit: measured once in ten
thousand values on the development machine, enough to turn a path). The point and its
moved copies run as lanes of one pass over the data.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from backtest.models import fast_ets_kernel as kernel
from backtest.models.compiled import njit, njit_ieee_division
from backtest.models.lbfgsb_driver import Box, Minimum, minimize_bounded

#: scipy's forward-difference steps (``approx_derivative``, two points): statsmodels'
#: absolute step (``epsilon`` of ``fmin_l_bfgs_b``), and the relative one where that
#: vanishes against the coordinate (the square root of the machine epsilon).
DIFFERENCE_STEP = 1e-8
RELATIVE_STEP = math.sqrt(2.0 ** -52)
#: statsmodels' search: ``fmin_l_bfgs_b``'s defaults (``factr = 1e7`` as scipy's ftol,
#: ``pgtol``, ``m``, ``maxfun``) and ``ETSModel.fit``'s ``maxiter``.
FTOL, GTOL = 1e7 * float(np.finfo(float).eps), 1e-5
CORRECTIONS, MAX_VALUES, MAX_ITERATIONS = 10, 15000, 1000


def replay(theta: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
           multiplicative_season: bool, free: np.ndarray, box: Box) -> Minimum:
    """statsmodels' search from the internal vector ``theta`` (its free entries inside
    ``box``) over ``theta[free]``; ``theta`` is left at the last point evaluated."""
    objective = _difference_objective(theta, y, m, multiplicative_error,
                                      multiplicative_season, free, box)
    return minimize_bounded(objective, theta[free], box, (), ftol=FTOL, gtol=GTOL,
                            max_iterations=MAX_ITERATIONS,
                            max_evaluations=MAX_VALUES // (1 + len(free)),
                            corrections=CORRECTIONS)


def lane_loglikes(lanes: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
                  multiplicative_season: bool) -> np.ndarray:
    """statsmodels' log-likelihood (``ETSModel._loglike_internal``) at each row of
    ``lanes`` (internal vectors), bit for bit; NaN where the recursions break down or the
    error sum is zero or not finite."""
    sums = _LaneSums(lanes, y, m, multiplicative_error, multiplicative_season)
    return loglikes(*sums.log_terms(), y.shape[0])


def _difference_objective(theta: np.ndarray, y: np.ndarray, m: int,
                          multiplicative_error: bool, multiplicative_season: bool,
                          free: np.ndarray, box: Box) -> Callable[[np.ndarray, np.ndarray],
                                                                  float]:
    """``objective(x, gradient)``: minus the log-likelihood per observation with
    ``theta[free] = x`` (written into ``theta``); its gradient, by statsmodels' forward
    differences, written to ``gradient``."""
    lanes, steps = np.empty((len(free) + 1, len(theta))), np.empty(len(free))
    sums = _LaneSums(lanes, y, m, multiplicative_error, multiplicative_season)
    log_terms, lower, upper, n = sums.log_terms, box.lower, box.upper, len(y)

    def objective(x: np.ndarray, gradient: np.ndarray) -> float:
        move_lanes(x, theta, free, lower, upper, lanes, steps)
        log_inner, log_sums = log_terms()
        return forward_differences(log_inner, log_sums, steps, n, gradient)

    return objective


class _LaneSums:
    """A pass over the rows of ``lanes`` (updated in place by the caller between passes)
    into buffers of its own: compiled code fills them in place (a compiled function that
    returns arrays pays for boxing them at every call)."""

    def __init__(self, lanes: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
                 multiplicative_season: bool) -> None:
        k, n = lanes.shape[0], len(y)
        rows = k if multiplicative_error else 0  # for the logarithms of the predictions
        self.args = (lanes, y, m, multiplicative_error, multiplicative_season,
                     np.empty((n, k)), np.empty((rows, n)), np.empty(k))
        self.predictions, self.inner = self.args[6], self.args[7]
        self.log_inner, self.log_sums = np.empty(k), np.empty(rows)

    def log_terms(self) -> tuple[np.ndarray, np.ndarray]:
        """Per lane, the logarithm of ``2 pi`` times the mean squared error and the sum of
        the logarithms of the absolute predictions (none without a multiplicative error),
        both by numpy's logarithm."""
        lane_sums(*self.args)
        np.log(self.inner, out=self.log_inner)
        if self.log_sums.shape[0]:
            np.abs(self.predictions, out=self.predictions)
            np.log(self.predictions, out=self.predictions)
            self.predictions.sum(axis=1, out=self.log_sums)
        return self.log_inner, self.log_sums


@njit
def move_lanes(x: np.ndarray, theta: np.ndarray, free: np.ndarray, lower: np.ndarray,
               upper: np.ndarray, lanes: np.ndarray, steps: np.ndarray) -> None:
    """Writes ``x`` into ``theta[free]``, and into ``lanes`` ``theta`` as row 0 and as row
    ``j + 1`` with ``x[j]`` moved by scipy's forward-difference step
    (``approx_derivative``: :data:`DIFFERENCE_STEP`, a relative step where that one
    vanishes against ``x[j]``, reversed where it would leave ``[lower, upper]``); into
    ``steps`` the steps as taken, ``(x[j] + step) - x[j]``."""
    k = free.shape[0]
    for j in range(k):
        theta[free[j]] = x[j]
    lanes[:] = theta
    for j in range(k):
        at = x[j]
        step = DIFFERENCE_STEP
        if (at + step) - at == 0.0:
            step = RELATIVE_STEP * (1.0 if at >= 0 else -1.0) * max(1.0, abs(at))
        if (at + step > upper[j] or at + step < lower[j]) \
                and abs(step) <= max(at - lower[j], upper[j] - at):
            step = -step
        lanes[j + 1, free[j]] = at + step
        steps[j] = (at + step) - at


@njit
def loglikes(log_inner: np.ndarray, log_predictions: np.ndarray, n: int) -> np.ndarray:
    """statsmodels' formula: ``-n / 2 (log(2 pi mean squared error) + 1)``, less the sum of
    the logarithms of the predictions for a multiplicative error."""
    values = -n / 2 * (log_inner + 1)
    if log_predictions.shape[0]:
        values -= log_predictions
    return values


@njit
def forward_differences(log_inner: np.ndarray, log_predictions: np.ndarray,
                        steps: np.ndarray, n: int, gradient: np.ndarray) -> float:
    """Minus the log-likelihood per observation (:data:`.fast_ets_kernel.BROKEN` where not
    finite) at the point (row 0) and its forward differences to the moved copies (row
    ``j + 1`` moved by ``steps[j]``), written to ``gradient``; returns the value at the
    point."""
    values = loglikes(log_inner, log_predictions, n)
    value = _per_observation(values[0], n)
    for j in range(steps.shape[0]):
        gradient[j] = (_per_observation(values[j + 1], n) - value) / steps[j]
    return value


@njit
def _per_observation(value: float, n: int) -> float:
    return float(-value / n) if math.isfinite(value) else kernel.BROKEN


@njit_ieee_division
def lane_sums(lanes: np.ndarray, y: np.ndarray, m: int, multiplicative_error: bool,
              multiplicative_season: bool, squares: np.ndarray, predictions: np.ndarray,
              inner: np.ndarray) -> None:
    """One pass of the recursions for every row of ``lanes``: into ``inner`` ``2 pi``
    times the mean squared error (NaN for a row whose recursions break down or whose
    error sum is zero or not finite), into ``predictions`` (a row per lane; no rows
    without a multiplicative error) the predictions (1 for a broken row, whose logarithms
    do not matter); ``squares`` (a row per step) holds the squared errors. The arithmetic
    is statsmodels': its smoother's steps, numpy's pairwise sum (:func:`_pairwise_sums`),
    then its formula.
    The rows share no arithmetic, and the loops over rows compile to vector
    instructions."""
    k, n = lanes.shape[0], y.shape[0]
    alpha, beta = lanes[:, kernel.ALPHA].copy(), lanes[:, kernel.BETA_STAR].copy()
    gamma, phi = lanes[:, kernel.GAMMA_STAR].copy(), lanes[:, kernel.PHI].copy()
    level, trend = lanes[:, kernel.LEVEL].copy(), lanes[:, kernel.TREND].copy()
    ring = np.empty((m, k))
    for i in range(m):
        ring[i] = lanes[:, kernel.SEASONS + m - 1 - i]
    breakdowns = np.zeros(k)  # steps dividing by zero, per row
    r = -1  # the ring slot t mod m, kept without a division
    for t in range(n):
        r = 0 if r == m - 1 else r + 1
        yt = y[t]
        # the classes' branches taken outside the loops over rows, which then vectorise
        # (indexed in two dimensions: a view per step costs more than the step)
        if multiplicative_season:
            for lane in range(k):
                breakdowns[lane] += ring[r, lane] == 0.0
        if multiplicative_error:
            for lane in range(k):
                yhat, level[lane], trend[lane], ring[r, lane] = kernel.advance(
                    level[lane], trend[lane], ring[r, lane], yt, alpha[lane], beta[lane],
                    gamma[lane], phi[lane], multiplicative_season)
                e = (yt - yhat) / yhat
                breakdowns[lane] += yhat == 0.0
                predictions[lane, t] = yhat
                squares[t, lane] = e * e
        else:
            for lane in range(k):
                yhat, level[lane], trend[lane], ring[r, lane] = kernel.advance(
                    level[lane], trend[lane], ring[r, lane], yt, alpha[lane], beta[lane],
                    gamma[lane], phi[lane], multiplicative_season)
                e = yt - yhat
                squares[t, lane] = e * e
        if multiplicative_season:
            for lane in range(k):
                breakdowns[lane] += level[lane] == 0.0
    sse = _pairwise_sums(squares, 0, n)
    for lane in range(k):
        total = sse[lane]
        if breakdowns[lane] > 0 or not (total > 0.0 and math.isfinite(total)):
            inner[lane] = math.nan
            if multiplicative_error:
                predictions[lane] = 1.0
        else:
            inner[lane] = 2 * math.pi * (total / n)


@njit_ieee_division
def _pairwise_sums(rows: np.ndarray, start: int, count: int) -> np.ndarray:
    """Each column's sum over ``rows[start:start + count]``, added in the order numpy's
    ``sum`` adds a contiguous array (pairwise: a block of at most 128 values as
    :func:`_block_sums` adds it, a longer stretch split in two halves summed alike and
    then added), so each is bit for bit ``np.sum`` of the column. The halving runs on a
    stack of its own (numba cannot cache a recursive function)."""
    k = rows.shape[1]
    starts, counts = np.empty(64, dtype=np.int64), np.empty(64, dtype=np.int64)
    joins = np.zeros(64, dtype=np.bool_)  # a stretch whose two halves are summed: add them
    sums = np.empty((64, k))
    starts[0], counts[0], joins[0] = start, count, False
    frames, done = 1, 0
    while frames:
        frames -= 1
        at, size, join = starts[frames], counts[frames], joins[frames]
        if join:
            done -= 1
            for lane in range(k):
                sums[done - 1, lane] = sums[done - 1, lane] + sums[done, lane]
        elif size <= 128:
            sums[done] = _block_sums(rows, at, size)
            done += 1
        else:
            half = size // 2
            half -= half % 8
            # popped in reverse: the left half, the right half, then their sum
            starts[frames], counts[frames], joins[frames] = at, size, True
            starts[frames + 1], counts[frames + 1], joins[frames + 1] = \
                at + half, size - half, False
            starts[frames + 2], counts[frames + 2], joins[frames + 2] = at, half, False
            frames += 3
    total: np.ndarray = sums[0].copy()
    return total


@njit_ieee_division
def _block_sums(rows: np.ndarray, start: int, count: int) -> np.ndarray:
    """numpy's sum of a block of at most 128 values, per column: eight running sums over
    the multiples of eight, added in pairs, then the rest one by one (fewer than eight
    values: one by one from zero)."""
    k = rows.shape[1]
    total = np.zeros(k)
    i = 0
    if count >= 8:
        running = rows[start:start + 8].copy()
        i = 8
        while i < count - count % 8:
            for j in range(8):
                for lane in range(k):
                    running[j, lane] += rows[start + i + j, lane]
            i += 8
        for lane in range(k):
            total[lane] = (((running[0, lane] + running[1, lane])
                            + (running[2, lane] + running[3, lane]))
                           + ((running[4, lane] + running[5, lane])
                              + (running[6, lane] + running[7, lane])))
    while i < count:
        for lane in range(k):
            total[lane] += rows[start + i, lane]
        i += 1
    return total
