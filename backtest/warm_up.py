"""Compiled code made ready before work arrives.

A small backtest of one seasonal ARIMA (with drift) and one ETS candidate, under the fast
estimator and the full assessment, calls every compiled function the engine uses: the
likelihoods and their gradients, the curvature and one-step errors of the fold summaries,
the kept-parameter ARIMA filter and the ETS smoothing pass of the forecasts. numba
compiles them, or loads them from its disk cache (:mod:`backtest.models.compiled`), now
rather than inside the first run.
"""

from __future__ import annotations

import time
import warnings

import numpy as np

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series

_CANDIDATES = [{"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
                "transform": "log"},
               {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
                "deterministic": "drift"},
               {"family": "ets", "error": "multiplicative", "trend": "damped",
                "season": "multiplicative"}]


def warm_up() -> float:
    """Run the small backtest in this process; returns the seconds it took."""
    began = time.perf_counter()
    t = np.arange(48.0)
    values = 100.0 + t + 10.0 * np.sin(2 * np.pi * t / 12) + np.cos(1.7 * t)
    series = make_series("warm-up", "P1M", [(f"{2000 + k // 12}-{k % 12 + 1:02d}", v)
                                            for k, v in enumerate(values)])
    plan = parse_plan({"horizon": 2, "max_origins": 2, "refit": 1, "estimator": "fast",
                       "assessment": "full"})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        run_backtest([series], parse_candidates(_CANDIDATES), plan, n_jobs=1)
    return time.perf_counter() - began
