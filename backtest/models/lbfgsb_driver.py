"""scipy's L-BFGS-B routine driven directly, for objectives that cost microseconds.

``scipy.optimize.minimize(method="L-BFGS-B")`` wraps every evaluation in its
scalar-function machinery (copies, counters, bound checks), which costs more than a
compiled exponential-smoothing likelihood with its gradient. This driver calls the same
routine (``scipy.optimize._lbfgsb.setulb``, the reverse-communication loop that
``minimize`` itself runs) with the objective called directly; iterates, line search and
stopping rules are scipy's. The routine is a private scipy interface: its signature is
the one of the scipy version in ``requirements.lock``, and the fast estimators fall back
to the reference path if the call fails.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.optimize import _lbfgsb

#: Line-search steps (scipy's default).
LINE_SEARCH_STEPS = 20
#: ``task`` codes of the routine: evaluate f and g, a new iterate, converged, stopped, failed.
_EVALUATE, _NEW_ITERATE, _CONVERGED, _STOP, _ABNORMAL = 3, 1, 4, 5, 8
_ITERATION_LIMIT = 504


@dataclass(frozen=True)
class Minimum:
    """Where the routine stopped: the point, the value and gradient there, its verdict."""

    x: np.ndarray
    fun: float
    jac: np.ndarray
    converged: bool
    line_search_failed: bool
    iterations: int
    evaluations: int


def minimize_bounded(fun: Callable[..., tuple[float, np.ndarray]], x0: np.ndarray,
                     lower: np.ndarray, upper: np.ndarray, args: tuple[Any, ...], *, ftol: float,
                     gtol: float, max_iterations: int, corrections: int = 10) -> Minimum:
    """Minimise ``fun(x, *args) -> (value, gradient)`` (a float and a float64 array) over
    ``lower <= x <= upper`` (infinite bounds allowed), with scipy's ``ftol``, ``gtol`` and
    ``maxcor`` (``corrections``, the stored correction pairs) meaning."""
    n = len(x0)
    finite_low, finite_up = np.isfinite(lower), np.isfinite(upper)
    low = np.where(finite_low, lower, 0.0)
    up = np.where(finite_up, upper, 0.0)
    kinds = np.where(finite_low & finite_up, 2, np.where(finite_low, 1,
                                                         np.where(finite_up, 3, 0)))
    kinds = kinds.astype(np.int32)
    x = np.clip(np.asarray(x0, dtype=float), lower, upper)
    f, g = 0.0, np.zeros(n)
    m = corrections
    work = np.zeros(2 * m * n + 5 * n + 11 * m * m + 8 * m)
    iwork = np.zeros(3 * n, dtype=np.int32)
    task, ln_task = np.zeros(2, dtype=np.int32), np.zeros(2, dtype=np.int32)
    lsave, isave, dsave = (np.zeros(4, dtype=np.int32), np.zeros(44, dtype=np.int32),
                           np.zeros(29))
    factr = ftol / np.finfo(float).eps
    iterations = evaluations = 0
    while True:
        _lbfgsb.setulb(m, x, low, up, kinds, f, g, factr, gtol, work, iwork, task, lsave,
                       isave, dsave, LINE_SEARCH_STEPS, ln_task)
        code = task[0]
        if code == _EVALUATE:
            f, g = fun(x, *args)
            evaluations += 1
        elif code == _NEW_ITERATE:
            iterations += 1
            if iterations >= max_iterations:
                task[0], task[1] = _STOP, _ITERATION_LIMIT
        else:
            break
    return Minimum(x.copy(), float(f), g.copy(), bool(task[0] == _CONVERGED),
                   bool(task[0] == _ABNORMAL), iterations, evaluations)
