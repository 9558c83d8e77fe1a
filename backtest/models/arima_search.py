"""Automatic ARIMA order selection as a candidate family, in the manner of Hyndman & Khandakar.

JSON form (every field optional)::

    {"family": "arima_search",
     "max_order": {"p": 3, "d": 2, "q": 3, "P": 1, "D": 1, "Q": 1},
     "seasonal": true, "criterion": "aicc" | "aic" | "bic", "max_models": 40,
     "transform": "none" | "log" | {"kind": "boxcox", "lambda": x}, "period": null,
     "seasonal_strength_threshold": 0.64, "max_inverse_root": 0.99}

``max_order`` may name only some orders; the others keep their defaults (the upper limits
are those of the ``arima`` family: 5, 2, 5, 2, 1, 2). ``seasonal: false`` searches
non-seasonal models only; ``period`` overrides the series' season length.

Every estimation looks at the training window alone:

1. D in {0, 1} by the seasonal-strength rule, then d by repeated KPSS tests on the
   seasonally differenced data (:mod:`backtest.models.differencing`).
2. p, q, P, Q and the deterministic term (a constant when d + D = 0, a drift when
   d + D = 1, none otherwise) by the stepwise search (:mod:`backtest.models.stepwise`)
   on the criterion. Orders are screened as ARMA models of the differenced data; fits
   that fail, do not converge or have roots near the unit circle are rejected
   (:mod:`backtest.models.arima_trial`). At most ``max_models`` orders are screened,
   which bounds the time per estimation.
3. The best order is estimated as an :class:`~backtest.models.arima.ArimaSpec` on the
   window itself; if that fit is rejected, the next best is, and so on (each screened
   order at most once). Forecasts come from that spec.

The fitted parameters hold the chosen model (``order.p``, ``order.d``, ``order.q``,
``order.P``, ``order.D``, ``order.Q``, ``order.period`` - 0 without a seasonal part - and
``deterministic``: 0 none, 1 constant, 2 drift), its estimates under the ``arima``
family's names (:meth:`ArimaSearchSpec.chosen` separates the two), and a summary of the
search: ``search.score`` (the chosen model's criterion), ``search.fitted``,
``search.failed``, ``search.not_converged``, ``search.near_unit_root`` (counts of fits)
and ``search.seasonal_strength`` (only when assessed). Warnings of rejected fits
appear only in those counts; the chosen fit's own warnings are re-emitted.

References
----------
Hyndman, R. J. and Khandakar, Y. (2008). Automatic time series forecasting: the forecast
package for R. *Journal of Statistical Software* 27(3).
Hurvich, C. M. and Tsai, C.-L. (1989). Regression and time series model selection in small
samples. *Biometrika* 76(2), 297-307.
"""

from __future__ import annotations

import warnings
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, cast

import numpy as np

from backtest.errors import CandidateError
from backtest.labels import search_label

# The arima family's parameter names, so that its forecast reads the chosen estimates.
from backtest.models.arima import RENAMED_PARAMETERS, ArimaSpec, Deterministic
from backtest.models.arima_trial import MAX_INVERSE_ROOT, Criterion, Trial
from backtest.models.arima_trial import run_trial as run_reference_trial
from backtest.models.base import (
    Estimator,
    Fit,
    Forecast,
    ModelSpec,
    Params,
    choice,
    optional_period,
    small_int,
    take_fields,
)
from backtest.models.differencing import STRONG_SEASONALITY, choose_differencing, difference
from backtest.models.fast_arima_trial import run_fast_trial
from backtest.models.fast_fallback import ESTIMATOR_KEY
from backtest.models.stepwise import STARTING_ORDERS, ArmaOrders, SearchBounds, stepwise_search
from backtest.transforms import Transform, parse_transform

_TERMS: tuple[Deterministic, ...] = ("none", "constant", "drift")
_CRITERIA = ("aicc", "aic", "bic")
#: Highest bound allowed per order, as for the ``arima`` family.
_HIGHEST = {"p": 5, "d": 2, "q": 5, "P": 2, "D": 1, "Q": 2}
_MAX_MODELS_HIGH = 200
_DEFAULT_MAX_MODELS = 40


@dataclass(frozen=True)
class OrderLimits:
    """Largest p, d, q, P, D, Q the search may choose."""

    p: int = 3
    d: int = 2
    q: int = 3
    seasonal_p: int = 1
    seasonal_d: int = 1
    seasonal_q: int = 1

    def body(self) -> dict[str, Any]:
        return {"p": self.p, "d": self.d, "q": self.q, "P": self.seasonal_p,
                "D": self.seasonal_d, "Q": self.seasonal_q}


@dataclass(frozen=True, eq=False)
class Selection:
    """The chosen trial and every trial the search ran."""

    chosen: Trial
    trials: tuple[Trial, ...]

    def summary(self) -> Params:
        """Counts of fitted and rejected orders, and the chosen criterion value."""
        fitted = [t for t in self.trials if t.verdict != "too_short"]
        out = {"search.score": self.chosen.score, "search.fitted": float(len(fitted))}
        for verdict in ("failed", "not_converged", "near_unit_root"):
            out[f"search.{verdict}"] = float(sum(t.verdict == verdict for t in fitted))
        return out


@dataclass(frozen=True)
class ArimaSearchSpec(ModelSpec):
    """ARIMA whose orders are chosen afresh at every estimation."""

    family: ClassVar[str] = "arima_search"
    fast_estimable: ClassVar[bool] = True
    raw_optional: ClassVar[bool] = True
    limits: OrderLimits = OrderLimits()
    seasonal: bool = True
    criterion: Criterion = "aicc"
    max_models: int = 40
    period: int | None = None
    transform: Transform = Transform()
    seasonal_strength_threshold: float = STRONG_SEASONALITY
    max_inverse_root: float = MAX_INVERSE_ROOT


    def fits_per_estimate(self) -> int:
        return self.max_models
    def body(self) -> dict[str, Any]:
        """The canonical body; the two thresholds appear only when not at their defaults,
        so candidates written before they became fields keep their ids."""
        out = {"max_order": self.limits.body(), "seasonal": self.seasonal,
               "criterion": self.criterion, "max_models": self.max_models,
               "period": self.period, "transform": self.transform.canonical()}
        return out | self._changed_thresholds()

    def _changed_thresholds(self) -> dict[str, Any]:
        defaults = {"seasonal_strength_threshold": STRONG_SEASONALITY,
                    "max_inverse_root": MAX_INVERSE_ROOT}
        return {name: getattr(self, name) for name, default in defaults.items()
                if getattr(self, name) != default}

    def label(self, season_length: int) -> str:
        changed = self._changed_thresholds()
        extras = [None if self.max_models == _DEFAULT_MAX_MODELS
                  else f"≤{self.max_models} fits",
                  f"F_S≥{changed['seasonal_strength_threshold']:g}"
                  if "seasonal_strength_threshold" in changed else None,
                  f"root≤{changed['max_inverse_root']:g}"
                  if "max_inverse_root" in changed else None]
        return search_label(self.criterion, self.season_period(season_length), self.seasonal,
                            self.limits.body(), OrderLimits().body(), extras, self.transform)

    def season_period(self, season_length: int) -> int:
        """The seasonal period searched over; 1 when the search is non-seasonal."""
        return (self.period or season_length) if self.seasonal else 1

    def min_train(self, season_length: int) -> int:
        period = self.season_period(season_length)
        seasonal = (0, self.limits.seasonal_d, 0) if period >= 2 else None
        simplest = ArimaSpec((0, self.limits.d, 0), seasonal, period)
        return simplest.min_train(season_length)

    # a family takes only the fit options its class flags declare (see ModelSpec.fit)
    def fit(self, y: np.ndarray, season_length: int, *,  # type: ignore[override]
            estimator: Estimator = "reference", keep_raw: bool = True) -> Fit:
        """Choose and estimate the order on ``y``. Under the fast estimator the fit carries
        statsmodels' results of a filter pass at the estimates (none without
        ``keep_raw``) and the estimates record ``estimator`` (1 fast, 0 reference)."""
        period = self.season_period(season_length)
        differencing = choose_differencing(y, period, self.limits.d, self.limits.seasonal_d,
                                           self.seasonal_strength_threshold)
        selection = search_orders(y, period, differencing.d, differencing.seasonal_d,
                                  self.limits, self.criterion, self.max_models, estimator,
                                  self.max_inverse_root)
        chosen = selection.chosen
        for caught in chosen.caught:
            warnings.warn_explicit(caught.message, caught.category, caught.filename,
                                   caught.lineno)
        raw = chosen.results
        if chosen.estimates is not None:
            estimates = chosen.estimates
            if keep_raw:
                raw = chosen.spec.results_at(y, season_length, estimates)
        else:
            estimates = _estimates(chosen.results)
            if estimator == "fast":
                estimates[ESTIMATOR_KEY] = 0.0
        params = {**encode_order(chosen.spec), **estimates, **selection.summary()}
        if differencing.seasonal_strength is not None:
            params["search.seasonal_strength"] = differencing.seasonal_strength
        return Fit(params, raw, True)  # the search accepts converged fits only

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        spec, estimates = self.chosen(params)
        return spec.forecast(y, season_length, estimates, horizon, levels, seed)

    def forecast_stretch(self, y: np.ndarray, season_length: int, params: Params,
                         ends: Sequence[int], horizon: int, levels: tuple[int, ...],
                         seeds: Sequence[int]) -> list[Forecast]:
        spec, estimates = self.chosen(params)
        return spec.forecast_stretch(y, season_length, estimates, ends, horizon, levels, seeds)

    def assessed(self, fit: Fit) -> tuple[ArimaSpec, Fit]:
        spec, estimates = self.chosen(fit.params)
        return spec, Fit(estimates, fit.raw, fit.converged)

    def chosen(self, params: Params) -> tuple[ArimaSpec, Params]:
        """The ARIMA model a fit chose (with this transform) and its estimates alone.

        Assessment code can treat the pair like an ``arima`` candidate's spec and
        parameters; the fit's ``raw`` results belong to that model.
        """
        order = (int(params["order.p"]), int(params["order.d"]), int(params["order.q"]))
        seasonal = (int(params["order.P"]), int(params["order.D"]), int(params["order.Q"]))
        period = int(params["order.period"])
        spec = ArimaSpec(order, seasonal if period else None, period or None,
                         _TERMS[int(params["deterministic"])], self.transform)
        estimates = {name: value for name, value in params.items()
                     if name not in ("deterministic", ESTIMATOR_KEY)
                     and not name.startswith(("order.", "search."))}
        return spec, estimates


def search_orders(y: np.ndarray, period: int, d: int, seasonal_d: int, limits: OrderLimits,
                  criterion: Criterion, max_models: int,
                  estimator: Estimator = "reference",
                  root_limit: float = MAX_INVERSE_ROOT) -> Selection:
    """Stepwise search of p, q, P, Q and the deterministic term for fixed d and D, each
    order fitted by ``estimator``; ``root_limit`` is the largest inverse-root modulus
    accepted.

    Orders are screened as ARMA models of the differenced data (a constant in place of a
    drift): their exact likelihood is the ARIMA model's diffuse likelihood, at a fraction
    of the cost. The best screened order is then estimated afresh as the ARIMA model on
    ``y`` and judged again; if that fit is rejected, the next best order is.

    Raises
    ------
    RuntimeError
        If no order was accepted.
    """
    seasonal = period >= 2
    bounds = SearchBounds(limits.p, limits.q, limits.seasonal_p if seasonal else 0,
                          limits.seasonal_q if seasonal else 0, d + seasonal_d <= 1)
    differenced = difference(y, d, seasonal_d, period)
    screened: dict[ArmaOrders, Trial] = {}
    run_trial = run_fast_trial if estimator == "fast" else run_reference_trial

    def score(orders: ArmaOrders) -> float:
        stationary = arima_spec(orders, 0, 0, period)
        screened[orders] = run_trial(stationary, differenced, period, criterion, root_limit)
        return screened[orders].score

    ranked = stepwise_search(score, bounds, max_models)
    if ranked and d + seasonal_d == 0:  # nothing was differenced: the screening fit is final
        return Selection(screened[ranked[0]], tuple(screened.values()))
    finals: list[Trial] = []
    for orders in ranked:
        finals.append(run_trial(arima_spec(orders, d, seasonal_d, period), y, period,
                                criterion, root_limit))
        if finals[-1].verdict == "accepted":
            return Selection(finals[-1], (*screened.values(), *finals))
    raise RuntimeError(f"arima search found no acceptable model: screened "
                       f"{_tally(screened.values())}; re-estimated {_tally(finals)}")


def _tally(trials: Iterable[Trial]) -> str:
    counts = Counter(t.verdict for t in trials)
    return ", ".join(f"{n} {verdict}" for verdict, n in sorted(counts.items())) or "none"


def arima_spec(orders: ArmaOrders, d: int, seasonal_d: int, period: int) -> ArimaSpec:
    """The ARIMA model for searched orders at fixed d, D and period (< 2: non-seasonal)."""
    integration = d + seasonal_d
    term: Deterministic = "none"
    if orders.deterministic:
        term = "constant" if integration == 0 else "drift"
    seasonal = (orders.seasonal_p, seasonal_d, orders.seasonal_q)
    if period < 2 or not any(seasonal):
        return ArimaSpec((orders.p, d, orders.q), None, None, term)
    return ArimaSpec((orders.p, d, orders.q), seasonal, period, term)


def _estimates(results: Any) -> Params:
    names = (RENAMED_PARAMETERS.get(n, n) for n in results.model.param_names)
    return {name: float(value) for name, value in zip(names, results.params)}


def encode_order(spec: ArimaSpec) -> Params:
    """The numeric ``order.*`` and ``deterministic`` entries that identify ``spec``."""
    p, d, q = spec.order
    seasonal_p, seasonal_d, seasonal_q = spec.seasonal or (0, 0, 0)
    return {"order.p": float(p), "order.d": float(d), "order.q": float(q),
            "order.P": float(seasonal_p), "order.D": float(seasonal_d),
            "order.Q": float(seasonal_q), "order.period": float(spec.period or 0),
            "deterministic": float(_TERMS.index(spec.deterministic))}


def parse(body: Mapping[str, Any]) -> ArimaSearchSpec:
    """Read an ``arima_search`` candidate body."""
    fields = take_fields(body, "arima_search", {"max_order", "seasonal", "criterion",
                                                "max_models", "transform", "period",
                                                "seasonal_strength_threshold",
                                                "max_inverse_root"})
    seasonal = fields.get("seasonal", True)
    if not isinstance(seasonal, bool):
        raise CandidateError(f"arima_search seasonal must be true or false; got {seasonal!r}")
    period = optional_period(fields.get("period"), "arima_search period")
    if period is not None and not seasonal:
        raise CandidateError("arima_search: a period needs \"seasonal\": true")
    criterion = choice(fields.get("criterion", "aicc"), _CRITERIA, "arima_search criterion")
    return ArimaSearchSpec(_limits(fields.get("max_order")), seasonal,
                           cast(Criterion, criterion),
                           _max_models(fields.get("max_models", _DEFAULT_MAX_MODELS)), period,
                           parse_transform(fields.get("transform")),
                           _share(fields.get("seasonal_strength_threshold", STRONG_SEASONALITY),
                                  "seasonal_strength_threshold", 0.0, 1.0),
                           _share(fields.get("max_inverse_root", MAX_INVERSE_ROOT),
                                  "max_inverse_root", 0.5, 1.0))


def _limits(value: object) -> OrderLimits:
    if value is None:
        return OrderLimits()
    if not isinstance(value, Mapping):
        raise CandidateError(f"arima_search max_order must be an object; got {value!r}")
    unknown = sorted(set(value) - set(_HIGHEST))
    if unknown:
        raise CandidateError(f"arima_search max_order: unknown order(s) {', '.join(unknown)}; "
                             f"allowed: {', '.join(_HIGHEST)}")
    chosen = {**OrderLimits().body(), **value}
    checked = {k: small_int(chosen[k], f"arima_search max_order {k}", high)
               for k, high in _HIGHEST.items()}
    return OrderLimits(checked["p"], checked["d"], checked["q"], checked["P"], checked["D"],
                       checked["Q"])


def _share(value: object, name: str, low: float, high: float) -> float:
    """A number in [low, high] (JSON integers accepted), else a :class:`CandidateError`."""
    if isinstance(value, bool) or not isinstance(value, int | float) or not low <= value <= high:
        raise CandidateError(f"arima_search {name} must be a number from {low:g} to {high:g}; "
                             f"got {value!r}")
    return float(value)


def _max_models(value: object) -> int:
    count = small_int(value, "arima_search max_models", _MAX_MODELS_HIGH)
    if count < len(STARTING_ORDERS):
        raise CandidateError(f"arima_search max_models must be at least "
                             f"{len(STARTING_ORDERS)} (the starting models); got {count}")
    return count
