"""One candidate over every origin of one series: the unit of work of a backtest.

At an origin that re-estimates, the candidate is fitted to the training window and
forecasts from its end. In between, parameters are kept and the model is updated with the
observations that arrived since the last estimation: the forecast conditions on the data
from the start of the last estimation window up to the origin (Tashman 2000's
"rolling-origin-update"). Closed-form families re-estimate at every origin. Nothing after
an origin is ever passed to the model. A fold that raises becomes a failed fold with its
reason; warnings are captured per fold.
"""

from __future__ import annotations

import warnings
import zlib
from collections.abc import Sequence

import numpy as np

from backtest.candidates import Candidate
from backtest.folds import Origin
from backtest.metrics import mase_scale, rmsse_scale
from backtest.models import Fit, Forecast
from backtest.plan import Plan
from backtest.results import FoldResult
from backtest.series import Series


def fold_seed(plan_seed: int, series_key: str, candidate_id: str, fold: int) -> int:
    """A seed for one fold's simulations, independent of worker and task order."""
    entropy = [plan_seed, zlib.crc32(series_key.encode()), int(candidate_id[1:9], 16), fold]
    return int(np.random.SeedSequence(entropy).generate_state(1)[0])


def run_candidate(series: Series, candidate: Candidate, plan: Plan,
                  origins: Sequence[Origin]) -> tuple[FoldResult, ...]:
    """Forecast every origin of ``series`` with ``candidate``."""
    spec, m = candidate.spec, series.season_length
    z = spec.transform.forward(np.asarray(series.values, dtype=float))
    fit: Fit | None = None
    fit_start = 0
    out = []
    for origin in origins:
        reestimate = origin.reestimate or spec.closed_form or fit is None
        start = origin.start if reestimate else fit_start
        seed = fold_seed(plan.seed, series.key, candidate.id, origin.number)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                if reestimate:
                    fit, forecast = spec.fit_forecast(z[start:origin.end], m, plan.horizon,
                                                      plan.levels, seed)
                    fit_start = start
                else:
                    forecast = spec.forecast(z[start:origin.end], m, fit.params, plan.horizon,
                                             plan.levels, seed)
                forecast = _back_transform(spec.transform, forecast)
                error = None
            except Exception as exc:  # a fold's failure must never crash the run
                if reestimate:
                    fit = None
                forecast, error = None, f"{type(exc).__name__}: {exc}"
        out.append(_fold(series, candidate, plan, origin, start, reestimate,
                         fit, forecast, error, _messages(caught)))
    return tuple(out)


def _back_transform(transform, forecast: Forecast) -> Forecast:
    mean = transform.inverse(forecast.mean)
    lower = {lv: transform.inverse(b) for lv, b in forecast.lower.items()}
    upper = {lv: transform.inverse(b) for lv, b in forecast.upper.items()}
    if not np.all(np.isfinite(mean)):
        raise FloatingPointError("the point forecast contains non-finite values")
    for level in lower:
        if np.any(np.isnan(lower[level])) or np.any(np.isnan(upper[level])):
            raise FloatingPointError(f"the {level} % interval contains NaN bounds")
    return Forecast(mean, lower, upper)


def _messages(caught: list[warnings.WarningMessage]) -> tuple[str, ...]:
    seen: dict[str, None] = {}
    for w in caught:
        seen.setdefault(f"{w.category.__name__}: {w.message}", None)
    return tuple(seen)


def _fold(series: Series, candidate: Candidate, plan: Plan, origin: Origin, start: int,
          reestimated: bool, fit: Fit | None, forecast: Forecast | None, error: str | None,
          caught: tuple[str, ...]) -> FoldResult:
    train = np.asarray(series.values[start:origin.end], dtype=float)
    target = range(origin.end, origin.end + plan.horizon)
    ok = forecast is not None

    def values(a: np.ndarray) -> tuple[float, ...]:
        return tuple(float(v) for v in a)

    scale, scale_sq = mase_scale(train, series.season_length), rmsse_scale(train)
    return FoldResult(
        series_key=series.key, candidate_id=candidate.id, fold=origin.number,
        origin=series.label(origin.end - 1), train_start=series.label(start),
        train_size=origin.end - start, reestimated=reestimated,
        status="ok" if ok else "failed", reason=error,
        params=dict(fit.params) if (fit is not None and ok) else None,
        warnings=caught, periods=tuple(series.label(i) for i in target),
        actuals=values(series.values[origin.end:origin.end + plan.horizon]),
        point=values(forecast.mean) if ok else None,
        lower={lv: values(b) for lv, b in forecast.lower.items()} if ok else {},
        upper={lv: values(b) for lv, b in forecast.upper.items()} if ok else {},
        scale=scale if np.isfinite(scale) else None,
        scale_sq=scale_sq if np.isfinite(scale_sq) else None,
    )
