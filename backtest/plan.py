"""The backtest plan: where the forecast origins fall, how windows move, when to re-estimate.

JSON form (every field optional except ``horizon``)::

    {"horizon": 12,
     "first_origin": {"train_size": 60} | {"period": "2019-12"},
     "step": 1, "max_origins": 24,
     "window": "expanding" | {"kind": "sliding", "length": 60},
     "refit": 1 | 6 | "once", "warm_start": false, "assessment": "full" | "lean",
     "estimator": "fast" | "reference",
     "levels": [80, 95], "seed": 0, "not_converged": "keep" | "fail",
     "benchmark": "seasonal_naive", "rank_by": "mase", "rank_horizon": null}

Origin ``t`` means the model sees observations ``0..t-1`` (or the last ``length`` of them)
and forecasts ``t..t+H-1``. Origins run from the first one in steps of ``step`` while a full
horizon of actuals exists; if there are more than ``max_origins``, the latest are kept.

``warm_start: true`` starts each re-estimation's optimiser from the previous estimation's
values instead of the family's default start values (families with an iterative
optimiser: ARIMA, ETS). It is faster but lands on slightly different optima, so results
differ from a cold start; it is off by default and recorded in the canonical plan.

``not_converged`` says what a fold whose estimate did not converge (the optimiser's own
verdict, or a ``ConvergenceWarning`` while estimating) counts as: ``"keep"`` (the default)
scores its forecast and counts it in the ranking's ``folds_not_converged``; ``"fail"``
makes it a failed fold with that reason, left out of the scores.

``assessment: "lean"`` leaves out the two model-assessment computations that cost a fit's
worth of time per task: the coefficient standard errors of every re-estimating fold
(a numerical Hessian each; for ETS statsmodels' results object, which computes it on
construction, is not built either) and the diagnostics of the fit to the full series (one
more fit). Forecasts, scores, calibration, comparisons, the confidence set and the ranking are
those of ``"full"`` (the default); folds then carry no ``fit_summary``, the series'
``diagnostics`` are ``None`` per candidate and ``stability`` keeps only parameter paths.

``estimator`` says how the ARIMA and ETS families (``arima``, ``arima_search``, ``ets``)
estimate at a re-estimating origin: ``"fast"`` (the default) with the compiled exact
likelihood (:mod:`backtest.models.fast_arima`, :mod:`backtest.models.fast_ets`: the same
likelihood, the same or a better optimum, checked on validation corpora of over 500 folds
each), ``"reference"`` with statsmodels' own optimiser. Forecasts come from the same
statsmodels model either way. Folds estimated under ``"fast"`` record ``estimator`` among
their parameters (1 fast, 0 when the fast estimator failed and the reference took over,
with the reason among the warnings).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from backtest.errors import PlanError
from backtest.models.base import ESTIMATORS, Estimator
from backtest.models.benchmarks import Method
from backtest.score_registry import RANK_SCORES

BENCHMARKS = ("naive", "seasonal_naive", "drift", "mean")
ASSESSMENTS = ("full", "lean")
NOT_CONVERGED = ("keep", "fail")
_FIELDS = {"horizon", "first_origin", "step", "max_origins", "window", "refit", "warm_start",
           "assessment", "estimator", "levels", "seed", "benchmark", "rank_by", "rank_horizon",
           "not_converged"}


@dataclass(frozen=True)
class Plan:
    """A validated plan; see the module docstring for the meaning of each field."""

    horizon: int
    first_train_size: int | None = None
    first_period: str | None = None
    step: int = 1
    max_origins: int | None = None
    window: Literal["expanding", "sliding"] = "expanding"
    window_length: int | None = None
    refit: int | Literal["once"] = 1
    levels: tuple[int, ...] = (80, 95)
    seed: int = 0
    benchmark: Method = "seasonal_naive"
    rank_by: str = "mase"
    rank_horizon: int | None = None
    warm_start: bool = False
    assessment: Literal["full", "lean"] = "full"
    estimator: Estimator = "fast"
    not_converged: Literal["keep", "fail"] = "keep"

    def reestimates_at(self, origin_number: int) -> bool:
        """Whether parameters are re-estimated at the ``origin_number``-th origin (0-based)."""
        if self.refit == "once":
            return origin_number == 0
        return origin_number % self.refit == 0

    def canonical(self) -> dict[str, Any]:
        """Canonical JSON body (every default filled in)."""
        first = ({"period": self.first_period} if self.first_period is not None
                 else {"train_size": self.first_train_size})
        window = ("expanding" if self.window == "expanding"
                  else {"kind": "sliding", "length": self.window_length})
        return {"horizon": self.horizon, "first_origin": first, "step": self.step,
                "max_origins": self.max_origins, "window": window, "refit": self.refit,
                "warm_start": self.warm_start, "assessment": self.assessment,
                "estimator": self.estimator,
                "levels": list(self.levels), "seed": self.seed,
                "benchmark": self.benchmark, "rank_by": self.rank_by,
                "rank_horizon": self.rank_horizon, "not_converged": self.not_converged}


def parse_plan(body: object) -> Plan:
    """Validate a plan body; raise :class:`PlanError` naming the field at fault."""
    if not isinstance(body, Mapping):
        raise PlanError("the plan must be a JSON object")
    unknown = sorted(set(body) - _FIELDS)
    if unknown:
        raise PlanError(f"plan: unknown field(s) {', '.join(unknown)}")
    horizon = _positive(body.get("horizon"), "horizon", required=True)
    first_size, first_period = _first_origin(body.get("first_origin"))
    window, length = _window(body.get("window", "expanding"))
    refit = body.get("refit", 1)
    if refit != "once":
        refit = _positive(refit, "refit")
    warm_start = body.get("warm_start", False)
    if not isinstance(warm_start, bool):
        raise PlanError(f"plan warm_start must be true or false, got {warm_start!r}")
    assessment = body.get("assessment", "full")
    if assessment not in ASSESSMENTS:
        raise PlanError(f"plan assessment must be one of {', '.join(ASSESSMENTS)}, "
                        f"got {assessment!r}")
    estimator = body.get("estimator", "fast")
    if estimator not in ESTIMATORS:
        raise PlanError(f"plan estimator must be one of {', '.join(ESTIMATORS)}, "
                        f"got {estimator!r}")
    not_converged = body.get("not_converged", "keep")
    if not_converged not in NOT_CONVERGED:
        raise PlanError(f"plan not_converged must be one of {', '.join(NOT_CONVERGED)}, "
                        f"got {not_converged!r}")
    levels = _levels(body.get("levels", [80, 95]))
    seed = body.get("seed", 0)
    if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed < 2**31:
        raise PlanError(f"plan seed must be an integer from 0 to 2**31-1, got {seed!r}")
    benchmark = body.get("benchmark", "seasonal_naive")
    if benchmark not in BENCHMARKS:
        raise PlanError(f"plan benchmark must be one of {', '.join(BENCHMARKS)}, got {benchmark!r}")
    rank_by = body.get("rank_by", "mase")
    if rank_by not in RANK_SCORES:
        raise PlanError(f"plan rank_by must be one of {', '.join(RANK_SCORES)}, got {rank_by!r}")
    rank_horizon = body.get("rank_horizon")
    if rank_horizon is not None:
        rank_horizon = _positive(rank_horizon, "rank_horizon")
        if rank_horizon > horizon:
            raise PlanError(f"plan rank_horizon {rank_horizon} exceeds the horizon {horizon}")
    return Plan(horizon, first_size, first_period, _positive(body.get("step", 1), "step"),
                _optional_positive(body.get("max_origins"), "max_origins"),
                window, length, refit, levels, seed, benchmark, rank_by, rank_horizon,
                warm_start, assessment, estimator, not_converged)


def _positive(value: object, name: str, *, required: bool = False) -> int:
    if value is None and required:
        raise PlanError(f"plan {name} is required")
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise PlanError(f"plan {name} must be a positive integer, got {value!r}")
    return value


def _optional_positive(value: object, name: str) -> int | None:
    return None if value is None else _positive(value, name)


def _first_origin(body: object) -> tuple[int | None, str | None]:
    if body is None:
        return None, None
    if isinstance(body, Mapping) and set(body) == {"train_size"}:
        return _optional_positive(body["train_size"], "first_origin.train_size"), None
    if isinstance(body, Mapping) and set(body) == {"period"} and isinstance(body["period"], str):
        return None, body["period"]
    raise PlanError('plan first_origin must be {"train_size": n} or {"period": "<label>"}')


def _window(body: object) -> tuple[Literal["expanding", "sliding"], int | None]:
    if body == "expanding" or body == {"kind": "expanding"}:
        return "expanding", None
    if isinstance(body, Mapping) and body.get("kind") == "sliding" and set(body) == {"kind",
                                                                                     "length"}:
        return "sliding", _positive(body["length"], "window.length")
    raise PlanError('plan window must be "expanding" or {"kind": "sliding", "length": n}')


def _levels(body: object) -> tuple[int, ...]:
    if not isinstance(body, list) or not body:
        raise PlanError("plan levels must be a non-empty list of percentages, e.g. [80, 95]")
    for level in body:
        if isinstance(level, bool) or not isinstance(level, int) or not 1 <= level <= 99:
            raise PlanError(f"plan levels must be whole percentages from 1 to 99, got {level!r}")
    if len(set(body)) != len(body):
        raise PlanError("plan levels repeat a value")
    return tuple(sorted(body))
