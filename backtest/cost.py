"""What a backtest will cost, estimated from its plan before anything is computed.

The estimate is an upper bound built from the origins the engine would use
(:func:`backtest.engine.planned_origins`):

- model fits by family: each candidate is estimated at its re-estimating origins (every
  origin for closed-form families), once more on the whole series under a ``"full"``
  assessment, and an order search may fit up to its ``max_models`` per estimation;
- result rows written: per fold one fold row, ``horizon`` forecast rows and
  ``horizon x levels`` interval rows; per candidate its scores (every horizon and pooled,
  each point and distribution metric, and each level metric per level), one ranking and
  one candidate row; one unit row per series.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass

from backtest.candidates import Candidate
from backtest.engine import planned_origins
from backtest.plan import Plan
from backtest.scoring import DISTRIBUTION_METRICS, LEVEL_METRICS, POINT_METRICS
from backtest.series import Series


@dataclass(frozen=True)
class RunCost:
    """The estimated work of one backtest; ``unit_folds`` counts each series' folds (its
    candidates, the benchmark included, times its origins), in series order."""

    unit_folds: tuple[int, ...]
    fits: dict[str, int]
    rows: int

    @property
    def folds(self) -> int:
        return sum(self.unit_folds)

    @property
    def total_fits(self) -> int:
        return sum(self.fits.values())

    def to_dict(self) -> dict:
        """JSON-ready form: folds, fits by family and in total, rows."""
        return {"folds": self.folds, "fits": dict(sorted(self.fits.items())),
                "total_fits": self.total_fits, "rows": self.rows}


def estimate_cost(series: Sequence[Series], candidates: Sequence[Candidate],
                  plan: Plan) -> RunCost:
    """The cost of backtesting ``candidates`` on ``series`` under ``plan``; raises on bad
    input like the engine would."""
    levels, horizon = len(plan.levels), plan.horizon
    scores = len(POINT_METRICS) + len(DISTRIBUTION_METRICS) + levels * len(LEVEL_METRICS)
    per_candidate = (horizon + 1) * scores + 2
    fits: Counter[str] = Counter()
    unit_folds: list[int] = []
    rows = 0
    for pool, origins in planned_origins(series, candidates, plan):
        unit_folds.append(len(origins) * len(pool))
        reestimates = sum(o.reestimate for o in origins)
        for candidate in pool:
            spec = candidate.spec
            estimates = len(origins) if spec.closed_form else reestimates
            estimates += plan.assessment == "full"
            fits[spec.family] += estimates * spec.fits_per_estimate()
        rows += len(origins) * len(pool) * (1 + horizon * (1 + levels))
        rows += 1 + len(pool) * per_candidate
    return RunCost(tuple(unit_folds), dict(fits), rows)
