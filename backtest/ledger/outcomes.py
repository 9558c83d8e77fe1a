"""Outcomes: an issued forecast against the actuals that arrived later.

Each target period observed in a later version of the series gives one :class:`Outcome`:
the error (actual - point, so positive means under-forecasting), the error scaled by the
issuing version's MASE denominator, the M4 sMAPE term, and per level the interval hit and
the interval (Winkler) score, all as defined in :mod:`backtest.metrics` (an interval with
an infinite bound, as a Box-Cox back-transform can give, scores +inf). Periods not yet
observed, and periods the later version only filled by interpolation, give no outcome.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from backtest.errors import SeriesError
from backtest.ledger.errors import LedgerError
from backtest.ledger.issue import IssuedForecast
from backtest.metrics import interval_score, smape_terms
from backtest.series import Series


@dataclass(frozen=True)
class Outcome:
    """The realised error of one issued forecast at one horizon."""

    horizon: int
    period: str
    actual: float
    point: float
    error: float
    scaled_error: float
    smape_term: float | None
    hits: dict[int, bool]
    interval_scores: dict[int, float]


def score_outcomes(issued: IssuedForecast, actuals: Series) -> tuple[Outcome, ...]:
    """One outcome per target period of ``issued`` that ``actuals`` has observed.

    Raises :class:`LedgerError` if ``actuals`` is another series (key) or lies on another
    period grid than the issued periods (frequency).
    """
    if actuals.key != issued.series_key:
        raise LedgerError(f"the actuals are of series {actuals.key!r}, the forecast was issued "
                          f"for {issued.series_key!r}")
    indices = _indices_on_grid(issued, actuals)
    filled = set(actuals.filled)
    observed = [(h, period, index) for h, (period, index)
                in enumerate(zip(issued.periods, indices[1:]), start=1)
                if 0 <= index < len(actuals) and period not in filled]
    if not observed:
        return ()
    steps = np.array([h for h, _, _ in observed]) - 1
    actual = np.asarray(actuals.values, dtype=float)[[i for _, _, i in observed]]
    return tuple(_outcomes(issued, [p for _, p, _ in observed], steps, actual))


def realised_mase(outcomes: Sequence[Outcome]) -> float | None:
    """Mean absolute scaled error of ``outcomes`` (``None`` if there are none)."""
    if not outcomes:
        return None
    return float(np.mean([abs(o.scaled_error) for o in outcomes]))


def _indices_on_grid(issued: IssuedForecast, actuals: Series) -> list[int]:
    """Indices in ``actuals`` of the origin and the target periods, one step apart."""
    labels = (issued.origin, *issued.periods)
    try:  # by grid position, so a version whose labels are written otherwise still matches
        indices = [actuals.index_of(label) for label in labels]
    except SeriesError:
        indices = []
    first = indices[0] if indices else None
    if first is None or indices != list(range(first, first + len(labels))):
        raise LedgerError(f"the issued periods {issued.origin}, {', '.join(issued.periods)} "
                          f"are not consecutive periods of the {actuals.frequency.duration} "
                          f"actuals of series {actuals.key!r}")
    return list(range(first, first + len(labels)))


def _outcomes(issued: IssuedForecast, periods: list[str], steps: np.ndarray,
              actual: np.ndarray) -> list[Outcome]:
    """Outcomes at the 0-based horizon ``steps`` (all arithmetic done per array)."""
    point = np.asarray(issued.point, dtype=float)[steps]
    error = actual - point
    terms = smape_terms(actual, point)
    hits, scores = {}, {}
    for level in issued.levels:
        lower = np.asarray(issued.lower[level], dtype=float)[steps]
        upper = np.asarray(issued.upper[level], dtype=float)[steps]
        hits[level] = (lower <= actual) & (actual <= upper)
        with np.errstate(invalid="ignore"):  # inf * 0 for an unbounded side
            score = interval_score(lower, upper, actual, level)
        scores[level] = np.where(np.isfinite(lower) & np.isfinite(upper), score, np.inf)
    return [Outcome(horizon=int(step) + 1, period=period, actual=float(actual[i]),
                    point=float(point[i]), error=float(error[i]),
                    scaled_error=float(error[i]) / issued.scale,
                    smape_term=float(terms[i]) if math.isfinite(terms[i]) else None,
                    hits={lv: bool(hits[lv][i]) for lv in issued.levels},
                    interval_scores={lv: float(scores[lv][i]) for lv in issued.levels})
            for i, (step, period) in enumerate(zip(steps, periods))]
