"""What the backtest leads one to expect of a candidate, per horizon and level.

Built from the candidate's successful backtest folds: per horizon, the scaled absolute
errors |actual - point| / fold scale (the fold's MASE denominator) and their mean (the
backtest MASE at that horizon); per level, the empirical coverage pooled over folds and
horizons. Target periods a fill policy made (never observed) are no actuals: they are left
out, as the backtest's own scores leave them out (:func:`backtest.scoring.score_candidate`).
"""

from __future__ import annotations

import math
from collections.abc import Collection, Sequence
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
                           run_id: int | None = None,
                           filled: Collection[str] = ()) -> Expectation:
    """The :class:`Expectation` of ``candidate_id`` from a series' backtest folds.

    Folds of other candidates, failed folds and folds without a positive MASE scale are
    left out, and so are target periods in ``filled`` (the backtested version's filled
    periods); :class:`LedgerError` if nothing is left.
    """
    left_out = frozenset(filled)
    usable = [f for f in folds if f.candidate_id == candidate_id and f.status == "ok"
              and f.point is not None and f.scale is not None and f.scale > 0]
    errors: dict[int, list[float]] = {}
    hits: dict[int, list[bool]] = {}
    for fold in usable:
        points, scale = fold.point or (), fold.scale or math.nan  # both set on usable folds
        observed = [h for h, period in enumerate(fold.periods) if period not in left_out]
        for h in observed:
            errors.setdefault(h + 1, []).append(abs(fold.actuals[h] - points[h]) / scale)
        for level, lower in fold.lower.items():
            hits.setdefault(level, []).extend(
                lower[h] <= fold.actuals[h] <= fold.upper[level][h] for h in observed)
    if not errors:
        raise LedgerError(f"the backtest has no successful fold of candidate {candidate_id!r} "
                          "with a positive MASE scale and an observed target period")
    return Expectation(
        candidate_id=candidate_id, run_id=run_id,
        mase_by_horizon={h: float(np.mean(e)) for h, e in sorted(errors.items())},
        scaled_abs_errors={h: tuple(e) for h, e in sorted(errors.items())},
        coverage_by_level={lv: float(np.mean(x)) for lv, x in sorted(hits.items())})
