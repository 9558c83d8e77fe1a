"""What the backtest leads one to expect of a candidate, per horizon and level.

Built from the candidate's successful backtest folds: per horizon, the scaled absolute
errors |actual - point| / fold scale (the fold's MASE denominator) and their mean (the
backtest MASE at that horizon); per level, the empirical coverage pooled over folds and
horizons.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from backtest.ledger.errors import LedgerError
from backtest.results import FoldResult


@dataclass(frozen=True)
class Expectation:
    """A candidate's backtest accuracy, the yardstick for its realised accuracy."""

    candidate_id: str
    run_id: int | None
    mase_by_horizon: dict[int, float]
    scaled_abs_errors: dict[int, tuple[float, ...]]
    coverage_by_level: dict[int, float]


def expectation_from_folds(folds: Sequence[FoldResult], candidate_id: str,
                           run_id: int | None = None) -> Expectation:
    """The :class:`Expectation` of ``candidate_id`` from a series' backtest folds.

    Folds of other candidates, failed folds and folds without a positive MASE scale are
    left out; :class:`LedgerError` if none is left.
    """
    usable = [f for f in folds if f.candidate_id == candidate_id and f.status == "ok"
              and f.point is not None and f.scale is not None and f.scale > 0]
    if not usable:
        raise LedgerError(f"the backtest has no successful fold of candidate {candidate_id!r} "
                          "with a positive MASE scale")
    errors: dict[int, list[float]] = {}
    hits: dict[int, list[bool]] = {}
    for fold in usable:
        points, scale = fold.point or (), fold.scale or math.nan  # both set on usable folds
        for h, (actual, point) in enumerate(zip(fold.actuals, points), start=1):
            errors.setdefault(h, []).append(abs(actual - point) / scale)
        for level, lower in fold.lower.items():
            hits.setdefault(level, []).extend(
                lo <= a <= hi for lo, a, hi in zip(lower, fold.actuals, fold.upper[level]))
    return Expectation(
        candidate_id=candidate_id, run_id=run_id,
        mase_by_horizon={h: float(np.mean(e)) for h, e in sorted(errors.items())},
        scaled_abs_errors={h: tuple(e) for h, e in sorted(errors.items())},
        coverage_by_level={lv: float(np.mean(x)) for lv, x in sorted(hits.items())})
