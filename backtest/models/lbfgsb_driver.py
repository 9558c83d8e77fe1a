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
_ITERATION_LIMIT, _EVALUATION_LIMIT = 504, 502
_EPSILON = float(np.finfo(float).eps)


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


@dataclass(frozen=True)
class Box:
    """Bounds ``lower <= x <= upper`` (infinite bounds allowed), also in the routine's
    encoding: finite values (0 where infinite) and a kind per coordinate (0 none, 1 lower
    only, 2 both, 3 upper only). Built once, used by every search over the same bounds."""

    lower: np.ndarray
    upper: np.ndarray
    low: np.ndarray
    up: np.ndarray
    kinds: np.ndarray

    @classmethod
    def of(cls, lower: np.ndarray, upper: np.ndarray) -> Box:
        lower, upper = np.asarray(lower, dtype=float), np.asarray(upper, dtype=float)
        finite_low, finite_up = np.isfinite(lower), np.isfinite(upper)
        kinds = finite_low + 3 * finite_up - 2 * (finite_low & finite_up)
        return cls(lower, upper, np.where(finite_low, lower, 0.0),
                   np.where(finite_up, upper, 0.0), kinds.astype(np.int32))


def minimize_bounded(fun: Callable[..., float], x0: np.ndarray, box: Box,
                     args: tuple[Any, ...], *, ftol: float, gtol: float, max_iterations: int,
                     max_evaluations: int | None = None, corrections: int = 10) -> Minimum:
    """Minimise ``fun(x, gradient, *args) -> value`` (a float, with the gradient written
    into the float64 array ``gradient``) over ``box`` from ``x0`` (moved into the box), with
    scipy's ``ftol``, ``gtol`` and ``maxcor`` (``corrections``, the stored correction
    pairs) meaning; stopped like scipy's ``minimize`` at the iteration that reaches
    ``max_iterations`` or, failing that, at one that ends beyond ``max_evaluations``
    calls of ``fun``."""
    n, m = len(x0), corrections
    x = np.minimum(np.maximum(np.asarray(x0, dtype=float), box.lower), box.upper)
    f, g = 0.0, np.zeros(n)
    # the routine's workspace: work, dsave (floats); iwork, task, ln_task, lsave, isave
    floats = np.zeros(2 * m * n + 5 * n + 11 * m * m + 8 * m + 29)
    work, dsave = floats[:-29], floats[-29:]
    ints = np.zeros(3 * n + 52, dtype=np.int32)
    iwork, task, ln_task, lsave, isave = (ints[:3 * n], ints[3 * n:3 * n + 2],
                                          ints[3 * n + 2:3 * n + 4], ints[3 * n + 4:3 * n + 8],
                                          ints[3 * n + 8:])
    factr = ftol / _EPSILON
    setulb, low, up, kinds = _lbfgsb.setulb, box.low, box.up, box.kinds
    iterations = evaluations = 0
    while True:
        setulb(m, x, low, up, kinds, f, g, factr, gtol, work, iwork, task, lsave, isave,
               dsave, LINE_SEARCH_STEPS, ln_task)
        code = task.item(0)
        if code == _EVALUATE:
            f = fun(x, g, *args)
            evaluations += 1
        elif code == _NEW_ITERATE:
            iterations += 1
            if iterations >= max_iterations:
                task[0], task[1] = _STOP, _ITERATION_LIMIT
            elif max_evaluations is not None and evaluations > max_evaluations:
                task[0], task[1] = _STOP, _EVALUATION_LIMIT
        else:
            break
    return Minimum(x.copy(), float(f), g.copy(), code == _CONVERGED, code == _ABNORMAL,
                   iterations, evaluations)
