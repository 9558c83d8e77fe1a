"""Realised accuracy over time: per target period, every issued forecast that reached it.

A period's actual is scored by each forecast aimed at it (one per origin, at different
horizons). Its :class:`RealisedPoint` averages those outcomes: MASE (mean |scaled error|,
each scaled by its issuing version's scale), M4 sMAPE, coverage and interval score per
level; beside it ``expected_mase``, the backtest MASE averaged over the same horizons.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from backtest.ledger.expectation import Expectation
from backtest.ledger.outcomes import Outcome


@dataclass(frozen=True)
class RealisedPoint:
    """Realised accuracy at one target period over the ``count`` outcomes that reached it."""

    period: str
    count: int
    mase: float | None
    smape: float | None
    coverage: dict[int, float]
    interval_score: dict[int, float]
    horizons: tuple[int, ...] = ()
    expected_mase: float | None = None


def realised_points(outcomes: Sequence[Outcome],
                    expectation: Expectation | None) -> tuple[RealisedPoint, ...]:
    """One :class:`RealisedPoint` per target period of ``outcomes``, in period order."""
    by_period: dict[str, list[Outcome]] = {}
    for outcome in outcomes:
        by_period.setdefault(outcome.period, []).append(outcome)
    return tuple(_point(period, by_period[period], expectation) for period in sorted(by_period))


def _point(period: str, outcomes: list[Outcome], expectation: Expectation | None
           ) -> RealisedPoint:
    terms = [o.smape_term for o in outcomes if o.smape_term is not None]
    levels = sorted({level for o in outcomes for level in o.hits})
    horizons = tuple(sorted(o.horizon for o in outcomes))
    return RealisedPoint(
        period=period, count=len(outcomes),
        mase=_mean([abs(o.scaled_error) for o in outcomes]),
        smape=_mean(terms) if terms else None,
        coverage={lv: _mean([o.hits[lv] for o in outcomes if lv in o.hits])
                  for lv in levels},
        interval_score={lv: _mean([o.interval_scores[lv] for o in outcomes
                                   if lv in o.interval_scores]) for lv in levels},
        horizons=horizons, expected_mase=_expected(horizons, expectation))


def _expected(horizons: tuple[int, ...], expectation: Expectation | None) -> float | None:
    if expectation is None or any(h not in expectation.mase_by_horizon for h in horizons):
        return None
    return _mean([expectation.mase_by_horizon[h] for h in horizons])


def _mean(values: Sequence[float]) -> float:
    """Plain mean of a few numbers (numpy's call overhead dominates at these sizes)."""
    return math.fsum(values) / len(values)
