"""Forecast origins of a rolling-origin backtest (Tashman 2000): where each fold's training
window starts and ends, and whether its parameters are re-estimated."""

from __future__ import annotations

from dataclasses import dataclass

from backtest.errors import PlanError, SeriesError
from backtest.plan import Plan
from backtest.series import Series


@dataclass(frozen=True)
class Origin:
    """Fold ``number`` trains on observations ``start..end-1`` and forecasts ``end..``."""

    number: int
    start: int
    end: int
    reestimate: bool


def plan_origins(series: Series, plan: Plan, min_train: int) -> tuple[Origin, ...]:
    """The origins of ``plan`` on ``series``; raise if the series is too short for them.

    ``min_train`` is the fewest training observations any candidate needs.
    """
    first = _first_end(series, plan, min_train)
    needed = first + plan.horizon
    if len(series) < needed:
        raise SeriesError(
            f"series {series.key!r} has {len(series)} observations; the plan needs at least "
            f"{needed} ({first} for the first training window + {plan.horizon} for the horizon)")
    ends = list(range(first, len(series) - plan.horizon + 1, plan.step))
    if plan.max_origins is not None:
        ends = ends[-plan.max_origins:]
    return tuple(
        Origin(i, end - (plan.window_length or 0) if plan.window == "sliding" else 0, end,
               plan.reestimates_at(i))
        for i, end in enumerate(ends))


def _first_end(series: Series, plan: Plan, min_train: int) -> int:
    if plan.first_period is not None:
        try:
            first = series.index_of(plan.first_period) + 1
        except SeriesError as exc:
            raise PlanError(f"plan first_origin: {exc}") from None
        if first < 1:
            raise PlanError(f"plan first_origin {plan.first_period!r} lies before series "
                            f"{series.key!r} starts ({series.label(0)})")
    else:
        first = plan.first_train_size or max(min_train, plan.window_length or 0)
    if plan.window == "sliding" and first < (plan.window_length or 0):
        raise SeriesError(f"series {series.key!r}: the first origin has {first} observations, "
                          f"fewer than the sliding window length {plan.window_length}")
    usable = (plan.window_length or 0) if plan.window == "sliding" else first
    if usable < min_train:
        raise SeriesError(f"series {series.key!r}: the first training window has {usable} "
                          f"observations; the candidates need at least {min_train}")
    return first
