"""Issuing a forecast: one candidate fitted on all data of one series version.

The candidate is estimated on the whole version (transformed by its spec's transform) and
forecasts h = 1..H from the last observation; point and bounds come back on the original
scale exactly as in the backtest engine (:func:`backtest.models.base.back_transform`).
The record keeps what is needed to score it later without the data: the MASE and RMSSE
denominators of the issuing version, its fingerprint, the parameters and the software
versions. Library warnings raised while fitting are kept in ``warnings``.

A candidate with empirical intervals is issued with bounds from its backtest errors
(:func:`backtest.recalibration.issued_bounds`): at each horizon, the errors of every
backtest fold whose target period the issuing version holds; its parameters then record
``empirical.errors_h1`` and ``empirical.horizons`` (0: the model's own bounds were issued
at every horizon), and its spec names the intervals.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from backtest.candidates import Candidate
from backtest.captured_warnings import capturing_warnings, distinct_warning_lines
from backtest.errors import CandidateError
from backtest.ledger.errors import LedgerError
from backtest.metrics import mase_scale, rmsse_scale
from backtest.models.base import back_transform
from backtest.recalibration import issued_bounds
from backtest.results import FoldResult, jsonable_dict
from backtest.series import Series
from backtest.software import software_versions

MAX_HORIZON = 1000


@dataclass(frozen=True)
class IssuedForecast:
    """A published forecast of one series version by one candidate.

    ``origin`` is the label of the version's last observation, ``periods`` the target
    periods of h = 1..H. ``lower``/``upper`` map a level (in %) to bounds per horizon.
    ``scale`` is the version's mean absolute seasonal-naive difference (MASE denominator),
    ``scale_sq`` its mean squared one-step difference (RMSSE denominator).
    """

    series_key: str
    fingerprint: str
    candidate_id: str
    candidate_spec: dict[str, Any]
    label: str
    season_length: int
    origin: str
    periods: tuple[str, ...]
    point: tuple[float, ...]
    lower: dict[int, tuple[float, ...]]
    upper: dict[int, tuple[float, ...]]
    levels: tuple[int, ...]
    seed: int
    params: dict[str, float]
    scale: float
    scale_sq: float
    software: dict[str, str]
    warnings: tuple[str, ...]

    @property
    def horizon(self) -> int:
        return len(self.periods)

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dictionary (infinite bounds become ``None``)."""
        return jsonable_dict(self)

    @classmethod
    def from_dict(cls, body: Mapping[str, Any]) -> IssuedForecast:
        """Rebuild from :meth:`to_dict` output (``None`` bounds become -inf / +inf)."""
        try:
            return cls(
                series_key=str(body["series_key"]), fingerprint=str(body["fingerprint"]),
                candidate_id=str(body["candidate_id"]),
                candidate_spec=dict(body["candidate_spec"]), label=str(body["label"]),
                season_length=int(body["season_length"]), origin=str(body["origin"]),
                periods=tuple(str(p) for p in body["periods"]),
                point=tuple(float(v) for v in body["point"]),
                lower=_bounds_from_json(body["lower"], -math.inf),
                upper=_bounds_from_json(body["upper"], math.inf),
                levels=tuple(int(lv) for lv in body["levels"]), seed=int(body["seed"]),
                params={str(k): float(v) for k, v in body["params"].items()},
                scale=float(body["scale"]), scale_sq=float(body["scale_sq"]),
                software={str(k): str(v) for k, v in body["software"].items()},
                warnings=tuple(str(w) for w in body["warnings"]))
        except (KeyError, TypeError, ValueError, AttributeError) as exc:
            raise LedgerError(f"an issued forecast record is malformed ({exc!r})") from None


def issue_forecast(series: Series, candidate: Candidate, *, horizon: int,
                   levels: tuple[int, ...] = (80, 95), seed: int = 0,
                   backtest_folds: Sequence[FoldResult] = ()) -> IssuedForecast:
    """Fit ``candidate`` on all of ``series`` and forecast ``horizon`` steps ahead.

    ``backtest_folds`` (the candidate's folds in a backtest of the series) are needed
    when the candidate asks for empirical intervals, and used only then.

    Raises :class:`LedgerError` for a bad horizon or level, a candidate impossible for the
    series (too short, non-positive data under a transform, a seasonal part without a
    season), a series whose MASE scale is zero, and a failing fit or forecast.
    """
    horizon, levels = _checked_horizon(horizon), _checked_levels(levels)
    if isinstance(seed, bool) or not isinstance(seed, int):
        raise LedgerError(f"seed must be an integer, got {seed!r}")
    spec, m = candidate.spec, series.season_length
    _check_candidate_fits_series(series, candidate)
    values = np.asarray(series.values, dtype=float)
    scale, scale_sq = mase_scale(values, m), rmsse_scale(values)
    if not scale > 0:
        raise LedgerError(f"series {series.key!r} does not change over lags of {m}, so the "
                          "MASE scale of realised errors would be zero")
    with capturing_warnings() as caught:
        try:
            fit, raw = spec.fit_forecast(spec.transform.forward(values), m, horizon, levels,
                                         seed)
            forecast = back_transform(spec.transform, raw)
        except Exception as exc:  # any library failure becomes one clear ledger error
            raise LedgerError(f"{candidate.label(m)} could not be fitted to series "
                              f"{series.key!r}: {type(exc).__name__}: {exc}") from exc
    n = len(series)
    lower = {lv: _floats(forecast.lower[lv]) for lv in levels}
    upper = {lv: _floats(forecast.upper[lv]) for lv in levels}
    params = {k: float(v) for k, v in fit.params.items()}
    if candidate.intervals is not None:
        if not backtest_folds:
            raise LedgerError(f"{candidate.label(m)} issues empirical intervals, which need "
                              "its backtest folds on the series")
        lower, upper, marks = issued_bounds(
            _floats(forecast.mean), lower, upper, backtest_folds, candidate.intervals, scale,
            lambda period: series.index_of(period) < n)
        params.update(marks)
    return IssuedForecast(
        series_key=series.key, fingerprint=series.fingerprint(), candidate_id=candidate.id,
        candidate_spec=candidate.canonical, label=candidate.label(m), season_length=m,
        origin=series.label(n - 1), periods=tuple(series.label(n + i) for i in range(horizon)),
        point=_floats(forecast.mean), lower=lower, upper=upper, levels=levels, seed=seed,
        params=params, scale=scale, scale_sq=scale_sq,
        software=software_versions(), warnings=distinct_warning_lines(caught))


def _checked_horizon(horizon: object) -> int:
    if isinstance(horizon, bool) or not isinstance(horizon, int) or not 1 <= horizon <= MAX_HORIZON:
        raise LedgerError(f"horizon must be an integer from 1 to {MAX_HORIZON}, got {horizon!r}")
    return horizon


def _checked_levels(levels: object) -> tuple[int, ...]:
    if isinstance(levels, str | Mapping) or not isinstance(levels, Sequence) or not levels:
        raise LedgerError(f"levels must be a non-empty list of integers (in %), got {levels!r}")
    for level in levels:
        if isinstance(level, bool) or not isinstance(level, int) or not 1 <= level <= 99:
            raise LedgerError(f"each level must be an integer from 1 to 99 (in %), "
                              f"got {level!r}")
    if len(set(levels)) != len(levels):
        raise LedgerError(f"levels must not repeat, got {list(levels)}")
    return tuple(sorted(levels))


def _check_candidate_fits_series(series: Series, candidate: Candidate) -> None:
    spec, m = candidate.spec, series.season_length
    try:
        spec.check(m)
    except CandidateError as exc:
        raise LedgerError(f"series {series.key!r}: {exc}") from None
    if len(series) < spec.min_train(m):
        raise LedgerError(f"series {series.key!r} has {len(series)} observations; "
                          f"{candidate.label(m)} needs at least {spec.min_train(m)}")
    if spec.needs_positive and (series.values <= 0).any():
        first = int((series.values <= 0).argmax())
        raise LedgerError(f"{candidate.label(m)} needs strictly positive data, but series "
                          f"{series.key!r} has {series.values[first]:g} at period "
                          f"{series.label(first)}")


def _floats(values: np.ndarray) -> tuple[float, ...]:
    return tuple(float(v) for v in values)


def _bounds_from_json(body: Mapping[str, Any], missing: float) -> dict[int, tuple[float, ...]]:
    return {int(level): tuple(missing if v is None else float(v) for v in bounds)
            for level, bounds in body.items()}

