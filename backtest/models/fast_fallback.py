"""What the fast estimators share: the record of the estimator that fitted a fold, and the
fall back to the reference estimator when a fast estimate fails or does not converge."""

from __future__ import annotations

import warnings
from collections.abc import Callable
from typing import Any, Protocol, TypeVar

import numpy as np

from backtest.models.base import Fit, Params

#: The parameter that records how a fold was estimated: 1 fast, 0 reference after a failure.
ESTIMATOR_KEY = "estimator"


class FastEstimationError(RuntimeError):
    """The fast estimator did not reach a usable optimum (the caller falls back)."""


class EstimatorFallback(UserWarning):
    """The fast estimator failed on a fold and the reference estimator took over."""


#: Failures of a fast estimate that send the fold to the reference estimator.
FALLBACK_ERRORS = (FastEstimationError, ValueError, np.linalg.LinAlgError)


class FastEstimate(Protocol):
    """A fast estimator's answer: estimates and the optimiser's report."""

    @property
    def params(self) -> Params: ...

    @property
    def converged(self) -> bool: ...

    @property
    def iterations(self) -> int: ...

    @property
    def evaluations(self) -> int: ...

    @property
    def rescaled_by(self) -> float: ...


class ReferenceFitter(Protocol):
    """A model specification with the reference estimator."""

    def reference_fit(self, y: np.ndarray, season_length: int, *,
                      start_params: Params | None = None) -> Fit: ...


E = TypeVar("E", bound=FastEstimate)


def converged_or_raise(estimate: E) -> E:
    """``estimate`` if its optimiser converged.

    Raises
    ------
    FastEstimationError
        Otherwise, with the number of iterations.
    """
    if not estimate.converged:
        raise FastEstimationError(f"L-BFGS-B stopped after {estimate.iterations} "
                                  "iterations without converging")
    return estimate


def warn_fallback(exc: Exception, stacklevel: int = 2) -> None:
    """The :class:`EstimatorFallback` warning giving the reason."""
    warnings.warn(f"fast estimator failed ({exc}); the reference estimator was used",
                  EstimatorFallback, stacklevel=stacklevel + 1)


def fast_or_reference(spec: ReferenceFitter, y: np.ndarray, season_length: int,
                      start_params: Params | None, estimate: Callable[[], E],
                      raw_at: Callable[[E], Any] | None) -> Fit:
    """The converged fast ``estimate()`` as a :class:`Fit` marked ``estimator = 1`` (with
    ``raw_at(estimate)`` as its results object when given, carrying the optimiser's
    report as ``mle_retvals``); if it fails or does not converge, a warning with the reason
    and the reference fit marked ``estimator = 0``, with the reference's own verdict and
    rescaling factor."""
    try:
        result = converged_or_raise(estimate())
    except FALLBACK_ERRORS as exc:
        warn_fallback(exc, stacklevel=3)
        fit = spec.reference_fit(y, season_length, start_params=start_params)
        return Fit({**fit.params, ESTIMATOR_KEY: 0.0}, fit.raw, fit.converged, fit.rescaled_by)
    raw = None
    if raw_at is not None:
        raw = raw_at(result)
        raw.mle_retvals = {"converged": True, "iterations": result.iterations,
                           "fcalls": result.evaluations, "warnflag": 0}
    return Fit({**result.params, ESTIMATOR_KEY: 1.0}, raw, True, result.rescaled_by)
