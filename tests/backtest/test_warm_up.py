"""The worker's warm-up leaves every compiled function the engine uses ready: after it,
a backtest of the same candidate families in the same process compiles nothing more."""

from __future__ import annotations

import sys

import numba

from backtest.models import (
    compiled_filter,
    fast_arima_curvature,
    fast_arima_kernel,
    fast_ets_kernel,
)
from backtest.warm_up import warm_up


def _compiled_signatures() -> int:
    """Signatures compiled (or loaded from the cache) by every numba function loaded."""
    total = 0
    for module in list(sys.modules.values()):
        if not (getattr(module, "__name__", "") or "").startswith("backtest."):
            continue
        for value in vars(module).values():
            if isinstance(value, numba.core.registry.CPUDispatcher):
                total += len(value.signatures)
    return total


def test_a_second_warm_up_compiles_nothing_new_and_every_kernel_is_ready():
    warm_up()
    after_first = _compiled_signatures()
    assert after_first > 0
    warm_up()
    assert _compiled_signatures() == after_first
    for function in (compiled_filter.predicted_states, fast_arima_kernel.objective,
                     fast_arima_kernel.one_step_errors, fast_arima_curvature.arma_differences,
                     fast_ets_kernel.objective, fast_ets_kernel.one_step_errors,
                     fast_ets_kernel.smoothing_pass):
        assert function.signatures, function.__name__
