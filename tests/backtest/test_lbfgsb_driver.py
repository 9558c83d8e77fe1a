"""The direct L-BFGS-B driver against scipy's own ``minimize(method="L-BFGS-B")``.

Both run the same routine (``scipy.optimize._lbfgsb.setulb``), so with the same objective,
start, bounds and options the iterates must be the same, bit for bit, as must the counts
of iterations and evaluations. The test function is Rosenbrock's (Rosenbrock 1960, the
extended form of More, Garbow & Hillstrom 1981, problem 21), whose curved valley takes
L-BFGS-B dozens of iterations, with bounds of every kind the routine knows.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import minimize

from backtest.models.lbfgsb_driver import Box, minimize_bounded

#: One coordinate of each bound kind: both, lower only, upper only, none (twice).
LOWER = np.array([-1.5, 0.2, -np.inf, -np.inf, -np.inf])
UPPER = np.array([0.9, np.inf, 2.0, np.inf, np.inf])
START = np.array([-1.2, 1.0, -1.2, 1.0, 3.0])


def rosenbrock(x: np.ndarray) -> tuple[float, np.ndarray]:
    """Value and gradient of the extended Rosenbrock function."""
    value = float(np.sum(100.0 * (x[1:] - x[:-1] ** 2) ** 2 + (1.0 - x[:-1]) ** 2))
    gradient = np.zeros_like(x)
    gradient[:-1] = -400.0 * x[:-1] * (x[1:] - x[:-1] ** 2) - 2.0 * (1.0 - x[:-1])
    gradient[1:] += 200.0 * (x[1:] - x[:-1] ** 2)
    return value, gradient


def in_place(x: np.ndarray, gradient: np.ndarray) -> float:
    """The driver's contract: the gradient written into ``gradient``, the value returned."""
    value, gradient[:] = rosenbrock(x)
    return value


def test_box_encodes_each_bound_kind_as_the_routine_expects():
    box = Box.of(LOWER, UPPER)
    assert box.kinds.tolist() == [2, 1, 3, 0, 0]  # scipy's nbd: both, lower, upper, none
    assert box.kinds.dtype == np.int32
    assert box.low.tolist() == [-1.5, 0.2, 0.0, 0.0, 0.0]
    assert box.up.tolist() == [0.9, 0.0, 2.0, 0.0, 0.0]


@pytest.mark.parametrize(("ftol", "gtol", "corrections"),
                         [(2.2e-9, 1e-5, 10), (1e-13, 1e-10, 10), (1e-13, 1e-10, 3)])
def test_the_driver_takes_scipys_path(ftol, gtol, corrections):
    ours = minimize_bounded(in_place, START, Box.of(LOWER, UPPER), (), ftol=ftol, gtol=gtol,
                            max_iterations=1000, corrections=corrections)
    theirs = minimize(rosenbrock, START, jac=True, method="L-BFGS-B",
                      bounds=list(zip(LOWER, UPPER)),
                      options={"ftol": ftol, "gtol": gtol, "maxcor": corrections,
                               "maxiter": 1000, "maxls": 20})
    assert ours.iterations == theirs.nit > 10
    assert ours.evaluations == theirs.nfev
    np.testing.assert_array_equal(ours.x, theirs.x)
    assert ours.fun == theirs.fun
    assert ours.converged == theirs.success
    assert np.all(ours.x >= LOWER) and np.all(ours.x <= UPPER)
    assert ours.x[0] == 0.9  # the valley's floor (1, ..., 1) lies beyond this upper bound


def test_the_iteration_limit_stops_the_search_unconverged():
    stopped = minimize_bounded(in_place, START, Box.of(LOWER, UPPER), (), ftol=1e-13,
                               gtol=1e-10, max_iterations=5)
    assert stopped.iterations == 5
    assert not stopped.converged and not stopped.line_search_failed


def test_the_evaluation_limit_stops_like_scipys_maxfun():
    """scipy stops at the first iteration that ends beyond ``maxfun`` evaluations."""
    ours = minimize_bounded(in_place, START, Box.of(LOWER, UPPER), (), ftol=1e-13,
                            gtol=1e-10, max_iterations=1000, max_evaluations=20)
    theirs = minimize(rosenbrock, START, jac=True, method="L-BFGS-B",
                      bounds=list(zip(LOWER, UPPER)),
                      options={"ftol": 1e-13, "gtol": 1e-10, "maxiter": 1000, "maxfun": 20})
    assert ours.evaluations == theirs.nfev > 20
    assert ours.iterations == theirs.nit
    np.testing.assert_array_equal(ours.x, theirs.x)
    assert not ours.converged and not theirs.success
