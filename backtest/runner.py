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
``estimator: "fast"`` a ``fast_estimable`` family estimates with its compiled estimator. A
candidate that asks for empirical intervals gets them last, from its own folds
(:mod:`backtest.recalibration`). A combination runs each member over the origins (as a
candidate of its own: the same seeds, so the same folds) and combines them per origin
(:mod:`backtest.combining`).
"""

from __future__ import annotations

import warnings
import zlib
from collections.abc import Sequence

import numpy as np
from statsmodels.tools.sm_exceptions import ConvergenceWarning

from backtest.assessment import fold_fit_summary
from backtest.candidates import Candidate
from backtest.combining import combine_folds
from backtest.folds import Origin
from backtest.metrics import mase_scale, rmsse_scale
from backtest.models import Fit, Forecast, ModelSpec
from backtest.models.base import back_transform
from backtest.models.combination import CombinationSpec
from backtest.plan import Plan
from backtest.recalibration import recalibrate
from backtest.results import FoldResult
from backtest.series import Series


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
        return tuple(_model_folds(series, Candidate(s), plan, origins) for s in spec.members)
    return (_model_folds(series, candidate, plan, origins),)


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


def _model_folds(series: Series, candidate: Candidate, plan: Plan,
                 origins: Sequence[Origin]) -> tuple[FoldResult, ...]:
    """The folds with the model's own intervals."""
    z = candidate.spec.transform.forward(np.asarray(series.values, dtype=float))
    if candidate.spec.closed_form:
        return _closed_form_folds(series, candidate, plan, z, origins)
    out: list[FoldResult] = []
    fit: Fit | None = None
    fit_start, i = 0, 0
    while i < len(origins):
        origin = origins[i]
        if origin.reestimate or fit is None:
            fold, fit = _estimated_fold(series, candidate, plan, z, origin, fit)
            fit_start = origin.start
            out.append(fold)
            i += 1
            continue
        j = i
        while j < len(origins) and not origins[j].reestimate:
            j += 1
        out.extend(_kept_folds(series, candidate, plan, z, origins[i:j], fit, fit_start))
        i = j
    return tuple(out)


def _estimated_fold(series: Series, candidate: Candidate, plan: Plan, z: np.ndarray,
                    origin: Origin, previous: Fit | None = None
                    ) -> tuple[FoldResult, Fit | None]:
    spec, m = candidate.spec, series.season_length
    seed = fold_seed(plan.seed, series.key, candidate.id, origin.number)
    window = _known(series, spec, z, origin.end)[origin.start:]
    fit, forecast, error, summary = None, None, None, None
    warm = plan.warm_start and spec.warm_startable and previous is not None
    options: dict = {"start_params": previous.params} if warm else {}
    if plan.assessment == "lean" and spec.raw_optional:
        options["keep_raw"] = False
    if plan.estimator == "fast" and spec.fast_estimable:
        options["estimator"] = "fast"
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            fit, forecast = spec.fit_forecast(window, m, plan.horizon, plan.levels, seed,
                                              **options)
            forecast = back_transform(spec.transform, forecast)
        except Exception as exc:  # a fold's failure must never crash the run
            fit, forecast, error = None, None, _reason(exc)
    if fit is not None and not spec.closed_form and plan.assessment == "full":
        summary = fold_fit_summary(*spec.assessed(fit), window, m)
    converged = _converged(fit, caught)
    if fit is not None and fit.converged is None and converged is False:
        fit = Fit(fit.params, fit.raw, False, fit.rescaled_by)
    fold = _fold(series, candidate, plan, origin, origin.start, True, fit, forecast, error,
                 _messages(caught), summary)
    return fold, fit


def _closed_form_folds(series: Series, candidate: Candidate, plan: Plan, z: np.ndarray,
                       origins: Sequence[Origin]) -> tuple[FoldResult, ...]:
    """Closed-form families: every origin re-estimated, all windows in one call (origins
    whose window ends in a filled period on their own, see :func:`_known`)."""
    spec = candidate.spec
    alone = [o for o in origins if series.is_filled(o.end - 1)]
    if alone:
        batch = [o for o in origins if not series.is_filled(o.end - 1)]
        folds = [_estimated_fold(series, candidate, plan, z, o)[0] for o in alone]
        if batch:
            folds += _closed_form_folds(series, candidate, plan, z, batch)
        return tuple(sorted(folds, key=lambda f: f.fold))
    if type(spec).fit_forecast_windows is ModelSpec.fit_forecast_windows:  # no one pass
        return tuple(_estimated_fold(series, candidate, plan, z, o)[0] for o in origins)
    seeds = [fold_seed(plan.seed, series.key, candidate.id, o.number) for o in origins]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            pairs = spec.fit_forecast_windows(z, series.season_length,
                                              [(o.start, o.end) for o in origins],
                                              plan.horizon, plan.levels, seeds)
        except Exception:  # isolate the failing origins one by one below
            pairs = None
    if pairs is None or caught:  # per origin, so each fold gets its own failure or warnings
        return tuple(_estimated_fold(series, candidate, plan, z, o)[0] for o in origins)
    folds = []
    for origin, (fit, forecast) in zip(origins, pairs):
        try:
            forecast, error = back_transform(spec.transform, forecast), None
        except Exception as exc:
            forecast, error = None, _reason(exc)
        folds.append(_fold(series, candidate, plan, origin, origin.start, True, fit, forecast,
                           error, ()))
    return tuple(folds)


def _kept_folds(series: Series, candidate: Candidate, plan: Plan, z: np.ndarray,
                stretch: Sequence[Origin], fit: Fit, fit_start: int) -> list[FoldResult]:
    """Folds that keep ``fit``'s parameters, forecast in one pass where the family can
    (origins whose window ends in a filled period on their own, see :func:`_known`)."""
    spec, m = candidate.spec, series.season_length
    if any(series.is_filled(o.end - 1) for o in stretch):
        return [_single_kept_fold(series, candidate, plan, z, o, fit, fit_start,
                                  fold_seed(plan.seed, series.key, candidate.id, o.number))
                for o in stretch]
    seeds = [fold_seed(plan.seed, series.key, candidate.id, o.number) for o in stretch]
    ends = [o.end - fit_start for o in stretch]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            raw = spec.forecast_stretch(z[fit_start:stretch[-1].end], m, fit.params, ends,
                                        plan.horizon, plan.levels, seeds)
        except Exception:  # isolate the failing origins one by one below
            raw = None
    if raw is None or caught:  # per origin, so each fold gets its own failure or warnings
        return [_single_kept_fold(series, candidate, plan, z, o, fit, fit_start, seed)
                for o, seed in zip(stretch, seeds)]
    folds = []
    for origin, forecast in zip(stretch, raw):
        try:
            forecast, error = back_transform(spec.transform, forecast), None
        except Exception as exc:
            forecast, error = None, _reason(exc)
        folds.append(_fold(series, candidate, plan, origin, fit_start, False, fit, forecast,
                           error, ()))
    return folds


def _single_kept_fold(series: Series, candidate: Candidate, plan: Plan, z: np.ndarray,
                      origin: Origin, fit: Fit, fit_start: int, seed: int) -> FoldResult:
    spec = candidate.spec
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            forecast = spec.forecast(_known(series, spec, z, origin.end)[fit_start:],
                                     series.season_length, fit.params,
                                     plan.horizon, plan.levels, seed)
            forecast, error = back_transform(spec.transform, forecast), None
        except Exception as exc:  # a fold's failure must never crash the run
            forecast, error = None, _reason(exc)
    return _fold(series, candidate, plan, origin, fit_start, False, fit, forecast, error,
                 _messages(caught))


def _known(series: Series, spec: ModelSpec, z: np.ndarray, end: int) -> np.ndarray:
    """The transformed data up to ``end`` as known at that origin: ``z[:end]``, unless the
    window ends in filled periods, which are then carried forward from the last observed
    value (the whole-series fill interpolated them towards later data)."""
    if not series.is_filled(end - 1):
        return z[:end]
    return spec.transform.forward(series.as_of(end))


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


def _messages(caught: list[warnings.WarningMessage]) -> tuple[str, ...]:
    seen: dict[str, None] = {}
    for w in caught:
        seen.setdefault(f"{w.category.__name__}: {w.message}", None)
    return tuple(seen)


def _fold(series: Series, candidate: Candidate, plan: Plan, origin: Origin, start: int,
          reestimated: bool, fit: Fit | None, forecast: Forecast | None, error: str | None,
          caught: tuple[str, ...], summary: dict | None = None) -> FoldResult:
    train = series.as_of(origin.end)[start:]
    target = range(origin.end, origin.end + plan.horizon)
    ok = forecast is not None

    def values(a: np.ndarray) -> tuple[float, ...]:
        return tuple(float(v) for v in a)

    converged = None if fit is None else fit.converged
    if ok and converged is False and plan.not_converged == "fail":
        ok, error = False, "the estimate did not converge (plan: not_converged = fail)"
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
        fit_summary=summary, converged=converged,
    )
