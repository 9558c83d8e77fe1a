"""Frozen, JSON-ready result objects returned by the engine.

Every float that is undefined (NaN or infinite) becomes ``None`` in :func:`to_jsonable`;
scores carry a ``note`` saying why a value is missing.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any, Literal


@dataclass(frozen=True)
class FoldResult:
    """One candidate at one forecast origin of one series.

    ``origin`` is the label of the last training period; ``periods`` are the target periods
    of h = 1..H. ``lower``/``upper`` map a level (in %) to bounds per horizon. ``scale`` is
    the in-sample mean absolute seasonal-naive error of the training window (MASE
    denominator), ``scale_sq`` the mean squared one-step naive error (RMSSE denominator).
    ``fit_summary`` (re-estimated folds of families with standard errors) holds coefficient
    standard errors and p-values, convergence and a Ljung-Box p-value. ``converged`` is
    whether the estimate the fold forecasts with reached the optimiser's convergence (kept
    folds inherit it; ``None`` without an iterative optimiser or without a fit).
    ``sample_crps`` is the CRPS at each horizon of the simulated paths behind the bounds
    (NaN where the actual is missing), for models that simulate; it is computed while the
    fold is made, from the paths, which are not kept, and is not stored with the fold
    (the scores computed from it are), so it takes no part in comparing folds.
    """

    series_key: str
    candidate_id: str
    fold: int
    origin: str
    train_start: str
    train_size: int
    reestimated: bool
    status: Literal["ok", "failed"]
    reason: str | None
    params: dict[str, float] | None
    warnings: tuple[str, ...]
    periods: tuple[str, ...]
    actuals: tuple[float, ...]
    point: tuple[float, ...] | None
    lower: dict[int, tuple[float, ...]]
    upper: dict[int, tuple[float, ...]]
    scale: float | None
    scale_sq: float | None
    fit_summary: dict[str, Any] | None = None
    converged: bool | None = None
    sample_crps: tuple[float, ...] | None = dataclasses.field(default=None, compare=False)

    @property
    def point_forecast(self) -> tuple[float, ...]:
        """The point forecast of a completed fold; a failed fold has none (``ValueError``)."""
        if self.point is None:
            raise ValueError(f"fold {self.fold} of candidate {self.candidate_id} failed: "
                             "it has no forecast")
        return self.point

    def error(self, horizon: int) -> float:
        """Actual minus point forecast at ``horizon`` (1-based) of a completed fold."""
        return self.actuals[horizon - 1] - self.point_forecast[horizon - 1]


@dataclass(frozen=True)
class Score:
    """One score of one candidate: at a horizon (1..H) or pooled over horizons (``None``).

    ``value``, ``count`` and ``note`` are over the candidate's own completed folds. The
    ``common_*`` fields are the same score over the ``common_folds`` origins that every
    candidate with a defined ``value`` of this score completed, the ground rankings compare
    candidates on (:func:`backtest.ranking.on_common_ground`); ``None`` until computed.
    """

    candidate_id: str
    horizon: int | None
    metric: str
    level: int | None
    value: float | None
    count: int
    note: str | None = None
    common_value: float | None = None
    common_count: int | None = None
    common_note: str | None = None
    common_folds: int | None = None


@dataclass(frozen=True)
class RankRow:
    """A candidate's place in a series' ranking by the plan's score and horizon.

    ``folds_not_converged`` counts the completed folds whose estimate did not converge
    (under the plan's ``not_converged: "fail"`` they are failed folds instead).
    ``score`` is over the ``common_folds`` origins every ranked candidate completed,
    ``score_own_folds`` over the candidate's own completed folds; ``score_count`` of
    ``score_possible`` points (folds for a per-fold mean) carry ``score``
    (:mod:`backtest.ranking`).
    """

    rank: int | None
    candidate_id: str
    label: str
    score: float | None
    ratio_to_benchmark: float | None
    is_benchmark: bool
    folds_ok: int
    folds_failed: int
    in_confidence_set: bool | None = None
    beats_benchmark: bool | None = None
    calibration_zone: str | None = None
    folds_not_converged: int = 0
    score_own_folds: float | None = None
    common_folds: int | None = None
    score_count: int | None = None
    score_possible: int | None = None


@dataclass(frozen=True)
class CandidateInfo:
    """A candidate as used on one series: id, label and canonical spec."""

    candidate_id: str
    label: str
    spec: dict[str, Any]
    added_as_benchmark: bool = False


@dataclass(frozen=True)
class SeriesResult:
    """Everything computed for one series.

    ``evidence`` holds the model-assessment results (diagnostics, calibration tests,
    forecast comparisons, model confidence set) as JSON-ready dictionaries.
    """

    series: dict[str, Any]
    candidates: tuple[CandidateInfo, ...]
    benchmark_id: str
    folds: tuple[FoldResult, ...]
    scores: tuple[Score, ...]
    ranking: tuple[RankRow, ...]
    evidence: dict[str, Any] = dataclasses.field(default_factory=dict)


@dataclass(frozen=True)
class BacktestResult:
    """The outcome of one backtest: plan, software versions and per-series results."""

    plan: dict[str, Any]
    software: dict[str, str]
    series: tuple[SeriesResult, ...]
    timing: dict[str, float]

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dictionary (non-finite floats become ``None``)."""
        return jsonable_dict(self)


def jsonable_dict(result: Any) -> dict[str, Any]:
    """A result dataclass as a JSON-ready dictionary (see :func:`to_jsonable`)."""
    out: dict[str, Any] = to_jsonable(dataclasses.asdict(result))
    return out


#: Types :func:`to_jsonable` returns unchanged, checked by exact type first (the cheap,
#: common case: most of a result's values are these).
_PLAIN = frozenset({str, int, bool, type(None)})


def to_jsonable(value: Any) -> Any:
    """Recursively turn tuples into lists, int dict keys into strings, NaN/inf into None."""
    if type(value) in _PLAIN:
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): v if _unchanged(v) else to_jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [v if _unchanged(v) else to_jsonable(v) for v in value]
    return value


def _unchanged(value: Any) -> bool:
    """Whether :func:`to_jsonable` returns ``value`` itself, for the cheap common cases."""
    return type(value) in _PLAIN or (type(value) is float and math.isfinite(value))
