"""The residual series behind the stored diagnostics, recomputed for the residual charts.

Results keep each candidate's residual ACF/PACF and tests but not the residuals themselves.
Refitting the candidate to the same series version repeats the full-series fit those
diagnostics describe (deterministic: same data, same spec, same optimiser), so the
residuals recovered here are the ones the stored statistics were computed from.
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from threadpoolctl import threadpool_limits

from backtest.assessment import one_step_errors
from backtest.candidates import parse_candidate
from backtest.series import Series


@dataclass(frozen=True)
class FitResiduals:
    """One-step in-sample errors of a full-series fit, with the periods they belong to."""

    periods: tuple[str, ...]
    values: np.ndarray


def full_fit_residuals(series: Series, spec: Mapping[str, Any]) -> FitResiduals | None:
    """Refit the candidate ``spec`` to all of ``series``; ``None`` if its family has no
    in-sample errors. Every family's errors end at the last observation (burn-in periods
    are dropped from the start), which is how they are matched to periods."""
    model = parse_candidate(dict(spec)).spec
    m = series.season_length
    z = model.transform.forward(np.asarray(series.values, dtype=float))
    # One BLAS thread, as in the engine's workers: these small models run slower with more.
    with warnings.catch_warnings(), threadpool_limits(limits=1):
        # This fit's warnings are already part of the stored diagnostics.
        warnings.simplefilter("ignore")
        assessed_spec, assessed_fit = model.assessed(model.fit(z, m))
        errors = one_step_errors(assessed_spec, assessed_fit, z, m).errors
    if errors is None:
        return None
    return FitResiduals(tuple(series.labels()[len(series) - len(errors):]), errors)


def residual_scale(spec: Mapping[str, Any], unit: str | None) -> str:
    """What the residuals are measured in, for the axis label."""
    if spec.get("family") == "ets" and spec.get("error") == "multiplicative":
        return "relative error, no unit"
    transform = spec.get("transform") or {"kind": "none"}
    if transform.get("kind") == "log":
        return "log scale"
    if transform.get("kind") == "boxcox":
        return f"Box-Cox scale, lambda {transform.get('lambda'):g}"
    return unit or "series units"
