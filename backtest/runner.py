"""One candidate over every origin of one series: the unit of work of a backtest.

At an origin that re-estimates, the candidate is fitted to the training window and
forecasts from its end. In between, parameters are kept and the model is updated with the
observations that arrived since the last estimation: the forecast conditions on the data
from the start of the last estimation window up to the origin (Tashman 2000's
"rolling-origin-update"). Closed-form families re-estimate at every origin. Nothing after
an origin is ever passed to the model: periods a fill policy made up at the end of a window
are carried forward from the last observed value, not interpolated towards later data. A
fold that raises becomes a failed fold with its reason; warnings are captured per fold:
when a one-pass computation over several origins (closed-form windows, a stretch of kept
parameters) raises or warns, its origins are computed again one by one, so each fold
carries only what its own origin raised. With the plan's
``warm_start``, a re-estimation of a ``warm_startable`` family starts its optimiser from
the previous estimation's parameters. With ``assessment: "lean"`` a re-estimated fold
gets no fit summary, and a ``raw_optional`` family builds no results object for it. With
``estimator: "fast"`` a ``fast_estimable`` family estimates with its compiled estimator and
builds no results object either: the fold summary of its estimate comes from the compiled
likelihood (:mod:`backtest.assessment.compiled_fit`). A
candidate that asks for empirical intervals gets them last, from its own folds
(:mod:`backtest.recalibration`). A combination runs each member over the origins (as a
candidate of its own: the same seeds, so the same folds) and combines them per origin
(:mod:`backtest.combining`).
"""

from __future__ import annotations

import math
import warnings
import zlib
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

import numpy as np
from statsmodels.tools.sm_exceptions import ConvergenceWarning

from backtest.assessment import fold_fit_summary
from backtest.candidates import Candidate
from backtest.captured_warnings import capturing_warnings, distinct_warning_lines
from backtest.combining import combine_folds
from backtest.folds import Origin
from backtest.metrics import crps_sample, mase_scale, rmsse_scale
from backtest.models import Fit, Forecast, ModelSpec
from backtest.models.base import back_transform
from backtest.models.combination import CombinationSpec
from backtest.plan import Plan
from backtest.recalibration import recalibrate
from backtest.results import FoldResult
from backtest.series import Series

T = TypeVar("T")


def fold_seed(plan_seed: int, series_key: str, candidate_id: str, fold: int) -> int:
    """A seed for one fold's simulations, independent of worker and task order."""
    entropy = [plan_seed, zlib.crc32(series_key.encode()), int(candidate_id[1:9], 16), fold]
    return int(np.random.SeedSequence(entropy).generate_state(1)[0])


def run_candidate(series: Series, candidate: Candidate, plan: Plan,
                  origins: Sequence[Origin]) -> tuple[FoldResult, ...]:
    """Forecast every origin of ``series`` with ``candidate``."""
    return finish_folds(candidate, plan, model_folds(series, candidate, plan, origins))


def model_folds(series: Series, candidate: Candidate, plan: Plan, origins: Sequence[Origin]
                ) -> tuple[tuple[FoldResult, ...], ...]:
    """The folds with the model's own intervals: one sequence per member of a combination,
    else one. Origins that start at a re-estimation give the same folds whether computed
    together or in runs cut before a re-estimating origin (the plan's ``warm_start`` of a
    ``warm_startable`` family aside: it links each estimation to the one before)."""
    spec = candidate.spec
    if isinstance(spec, CombinationSpec):
        return tuple(_model_folds(_Context.of(series, Candidate(s), plan), origins)
                     for s in spec.members)
    return (_model_folds(_Context.of(series, candidate, plan), origins),)


def finish_folds(candidate: Candidate, plan: Plan,
                 members: Sequence[Sequence[FoldResult]]) -> tuple[FoldResult, ...]:
    """The candidate's folds from :func:`model_folds` over all its origins: a combination's
    members combined, empirical intervals where the candidate asks for them."""
    spec = candidate.spec
    if isinstance(spec, CombinationSpec):
        folds = combine_folds(candidate.id, spec, members, plan.levels, plan.seed)
    else:
        folds = tuple(members[0])
    if candidate.intervals is None:
        return folds
    return recalibrate(folds, candidate.intervals, plan.levels, plan.step)


@dataclass(frozen=True)
class _Context:
    """What every fold of one candidate on one series shares; ``z`` is the transformed
    series."""

    series: Series
    candidate: Candidate
    plan: Plan
    z: np.ndarray

    @classmethod
    def of(cls, series: Series, candidate: Candidate, plan: Plan) -> _Context:
        z = candidate.spec.transform.forward(np.asarray(series.values, dtype=float))
        return cls(series, candidate, plan, z)

    @property
    def spec(self) -> ModelSpec:
        return self.candidate.spec

    def seed(self, origin: Origin) -> int:
        return fold_seed(self.plan.seed, self.series.key, self.candidate.id, origin.number)

    def known(self, end: int) -> np.ndarray:
        """The transformed data up to ``end`` as known at that origin: ``z[:end]``, unless
        the window ends in filled periods, which are then carried forward from the last
        observed value (the whole-series fill interpolated them towards later data)."""
        if not self.series.is_filled(end - 1):
            return self.z[:end]
        return self.spec.transform.forward(self.series.as_of(end))


@dataclass(frozen=True)
class _Attempt(Generic[T]):
    """What a computation returned, or why it raised, and the warnings it raised."""

    value: T | None
    error: str | None
    caught: list[warnings.WarningMessage]


def _attempt(compute: Callable[[], T]) -> _Attempt[T]:
    """Run ``compute`` capturing its warnings; an exception becomes the attempt's
    ``error`` (a fold's failure must never crash the run)."""
    with capturing_warnings() as caught:
        try:
            return _Attempt(compute(), None, caught)
        except Exception as exc:
            return _Attempt(None, _reason(exc), caught)


def _back_transformed(spec: ModelSpec, forecast: Forecast
                      ) -> tuple[Forecast | None, str | None]:
    """The forecast on the original scale, or why it could not be carried back."""
    try:
        return back_transform(spec.transform, forecast), None
    except Exception as exc:
        return None, _reason(exc)


def _model_folds(ctx: _Context, origins: Sequence[Origin]) -> tuple[FoldResult, ...]:
    """The folds with the model's own intervals."""
    if ctx.spec.closed_form:
        return _closed_form_folds(ctx, origins)
    out: list[FoldResult] = []
    fit: Fit | None = None
    fit_start, i = 0, 0
    while i < len(origins):
        origin = origins[i]
        if origin.reestimate or fit is None:
            fold, fit = _estimated_fold(ctx, origin, fit)
            fit_start = origin.start
            out.append(fold)
            i += 1
            continue
        j = i
        while j < len(origins) and not origins[j].reestimate:
            j += 1
        out.extend(_kept_folds(ctx, origins[i:j], fit, fit_start))
        i = j
    return tuple(out)


def _estimated_fold(ctx: _Context, origin: Origin, previous: Fit | None = None
                    ) -> tuple[FoldResult, Fit | None]:
    spec, plan, m = ctx.spec, ctx.plan, ctx.series.season_length
    window = ctx.known(origin.end)[origin.start:]
    warm = plan.warm_start and spec.warm_startable and previous is not None
    options: dict[str, Any] = {"start_params": previous.params} if warm and previous else {}
    fast = plan.estimator == "fast" and spec.fast_estimable
    if fast:
        options["estimator"] = "fast"
    # a fast fit's summary comes from the compiled likelihood, not from a results object
    if spec.raw_optional and (plan.assessment == "lean" or fast):
        options["keep_raw"] = False

    def fit_forecast() -> tuple[Fit, Forecast]:
        fit, forecast = spec.fit_forecast(window, m, plan.horizon, plan.levels,
                                          ctx.seed(origin), **options)
        return fit, back_transform(spec.transform, forecast)

    attempt = _attempt(fit_forecast)
    fit, forecast = attempt.value or (None, None)
    summary = None
    if fit is not None and not spec.closed_form and plan.assessment == "full":
        summary = fold_fit_summary(*spec.assessed(fit), window, m)
    converged = _converged(fit, attempt.caught)
    if fit is not None and fit.converged is None and converged is False:
        fit = Fit(fit.params, fit.raw, False, fit.rescaled_by)
    fold = _fold(ctx, origin, start=origin.start, reestimated=True, fit=fit,
                 forecast=forecast, error=attempt.error,
                 caught=distinct_warning_lines(attempt.caught), summary=summary)
    return fold, fit


def _closed_form_folds(ctx: _Context, origins: Sequence[Origin]) -> tuple[FoldResult, ...]:
    """Closed-form families: every origin re-estimated, all windows in one call (origins
    whose window ends in a filled period on their own, see :meth:`_Context.known`)."""
    spec, series = ctx.spec, ctx.series
    alone = [o for o in origins if series.is_filled(o.end - 1)]
    if alone:
        batch = [o for o in origins if not series.is_filled(o.end - 1)]
        folds = [_estimated_fold(ctx, o)[0] for o in alone]
        if batch:
            folds += _closed_form_folds(ctx, batch)
        return tuple(sorted(folds, key=lambda f: f.fold))
    if type(spec).fit_forecast_windows is ModelSpec.fit_forecast_windows:  # no one pass
        return tuple(_estimated_fold(ctx, o)[0] for o in origins)
    plan = ctx.plan
    attempt = _attempt(lambda: spec.fit_forecast_windows(
        ctx.z, series.season_length, [(o.start, o.end) for o in origins], plan.horizon,
        plan.levels, [ctx.seed(o) for o in origins]))
    # a failure or a warning: per origin, so each fold gets its own failure or warnings
    if attempt.value is None or attempt.caught:
        return tuple(_estimated_fold(ctx, o)[0] for o in origins)
    folds = []
    for origin, (fit, raw) in zip(origins, attempt.value):
        forecast, error = _back_transformed(spec, raw)
        folds.append(_fold(ctx, origin, start=origin.start, reestimated=True, fit=fit,
                           forecast=forecast, error=error))
    return tuple(folds)


def _kept_folds(ctx: _Context, stretch: Sequence[Origin], fit: Fit,
                fit_start: int) -> list[FoldResult]:
    """Folds that keep ``fit``'s parameters, forecast in one pass where the family can
    (origins whose window ends in a filled period on their own, see
    :meth:`_Context.known`)."""
    spec, plan = ctx.spec, ctx.plan
    if any(ctx.series.is_filled(o.end - 1) for o in stretch):
        return [_single_kept_fold(ctx, o, fit, fit_start) for o in stretch]
    ends = [o.end - fit_start for o in stretch]
    attempt = _attempt(lambda: spec.forecast_stretch(
        ctx.z[fit_start:stretch[-1].end], ctx.series.season_length, fit.params, ends,
        plan.horizon, plan.levels, [ctx.seed(o) for o in stretch]))
    # a failure or a warning: per origin, so each fold gets its own failure or warnings
    if attempt.value is None or attempt.caught:
        return [_single_kept_fold(ctx, o, fit, fit_start) for o in stretch]
    folds = []
    for origin, raw in zip(stretch, attempt.value):
        forecast, error = _back_transformed(spec, raw)
        folds.append(_fold(ctx, origin, start=fit_start, reestimated=False, fit=fit,
                           forecast=forecast, error=error))
    return folds


def _single_kept_fold(ctx: _Context, origin: Origin, fit: Fit, fit_start: int) -> FoldResult:
    spec, plan = ctx.spec, ctx.plan
    attempt = _attempt(lambda: back_transform(spec.transform, spec.forecast(
        ctx.known(origin.end)[fit_start:], ctx.series.season_length, fit.params,
        plan.horizon, plan.levels, ctx.seed(origin))))
    return _fold(ctx, origin, start=fit_start, reestimated=False, fit=fit,
                 forecast=attempt.value, error=attempt.error,
                 caught=distinct_warning_lines(attempt.caught))


def _converged(fit: Fit | None, caught: list[warnings.WarningMessage]) -> bool | None:
    """The optimiser's verdict; without one, ``False`` if statsmodels warned that it did not
    converge."""
    if fit is None or fit.converged is not None:
        return None if fit is None else fit.converged
    if any(issubclass(w.category, ConvergenceWarning) for w in caught):
        return False
    return None


def _reason(exc: Exception) -> str:
    return f"{type(exc).__name__}: {exc}"


def _fold(ctx: _Context, origin: Origin, *, start: int, reestimated: bool, fit: Fit | None,
          forecast: Forecast | None, error: str | None, caught: tuple[str, ...] = (),
          summary: dict[str, Any] | None = None) -> FoldResult:
    """The fold at ``origin`` from the estimate on data from ``start`` (``reestimated`` at
    this origin, or kept), its forecast, or why it failed, and its warnings."""
    series, plan = ctx.series, ctx.plan
    train = series.as_of(origin.end)[start:]
    target = range(origin.end, origin.end + plan.horizon)

    def values(a: np.ndarray) -> tuple[float, ...]:
        return tuple(float(v) for v in a)

    converged = None if fit is None else fit.converged
    if forecast is not None and converged is False and plan.not_converged == "fail":
        forecast, error = None, "the estimate did not converge (plan: not_converged = fail)"
    ok = forecast is not None
    scale, scale_sq = mase_scale(train, series.season_length), rmsse_scale(train)
    return FoldResult(
        series_key=series.key, candidate_id=ctx.candidate.id, fold=origin.number,
        origin=series.label(origin.end - 1), train_start=series.label(start),
        train_size=origin.end - start, reestimated=reestimated,
        status="ok" if ok else "failed", reason=error,
        params=dict(fit.params) if (fit is not None and ok) else None,
        warnings=caught, periods=tuple(series.label(i) for i in target),
        actuals=values(series.values[origin.end:origin.end + plan.horizon]),
        point=values(forecast.mean) if forecast is not None else None,
        lower={} if forecast is None else {lv: values(b) for lv, b in forecast.lower.items()},
        upper={} if forecast is None else {lv: values(b) for lv, b in forecast.upper.items()},
        scale=scale if np.isfinite(scale) else None,
        scale_sq=scale_sq if np.isfinite(scale_sq) else None,
        fit_summary=summary, converged=converged,
        sample_crps=(_sample_crps(forecast.sample, series.values[target.start:target.stop])
                     if ok and forecast is not None and forecast.sample is not None else None),
    )


def _sample_crps(sample: np.ndarray, actuals: np.ndarray) -> tuple[float, ...]:
    """CRPS of each horizon's simulated values against its actual (NaN if missing)."""
    return tuple(crps_sample(paths, float(actual)) if np.isfinite(actual) else math.nan
                 for paths, actual in zip(sample, actuals))
