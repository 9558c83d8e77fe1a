"""A combination's folds from its members' folds at the same origins.

At each origin the members' forecasts are combined by the rule
(:func:`backtest.models.combination.combine`). A fold fails when a member's fold failed.
The ``confidence_set`` rule keeps, at origin i, the members in the model confidence set
(Hansen, Lunde & Nason 2011; size 0.10, 1,000 stationary-bootstrap replications seeded
with the plan's seed and the fold) computed on their one-step absolute errors, each
divided by its fold's MASE scale, from the earlier folds whose one-step actual was known
at origin i (every earlier fold): nothing after the origin is used. Below
``MIN_SELECTION_FOLDS`` such folds, or when the set cannot be computed, every member is
kept. The weights used are recorded in the fold's parameters (``weight.<k>``, k the
member's 1-based position) with the folds the selection saw (``selection.folds``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from backtest.assessment import model_confidence_set
from backtest.models.base import Forecast
from backtest.models.combination import CombinationSpec, combine
from backtest.results import FoldResult

MIN_SELECTION_FOLDS = 10
SELECTION_SIZE = 0.10
SELECTION_REPS = 1000


def combine_folds(candidate_id: str, spec: CombinationSpec,
                  member_folds: Sequence[Sequence[FoldResult]], levels: Sequence[int],
                  seed: int) -> tuple[FoldResult, ...]:
    """One combined fold per origin; ``member_folds[k]`` are member k's folds in origin
    order, all at the same origins."""
    losses = _one_step_losses(member_folds)
    out = []
    for i, folds in enumerate(zip(*member_folds)):
        first = folds[0]
        failed = [k for k, f in enumerate(folds, start=1) if f.status != "ok"]
        if failed:
            reason = "; ".join(f"member {k}: {folds[k - 1].reason}" for k in failed)
            out.append(replace(first, candidate_id=candidate_id, status="failed",
                               reason=reason, params=None, point=None, lower={}, upper={},
                               warnings=_warnings(folds), fit_summary=None))
            continue
        chosen, seen = _selected(spec, losses[:i], seed, first.fold)
        forecast = combine([_as_forecast(folds[k]) for k in chosen], spec.rule, levels)
        weights = {f"weight.{k + 1}": (1.0 / len(chosen) if k in chosen else 0.0)
                   for k in range(len(folds))}
        out.append(replace(
            first, candidate_id=candidate_id, params={**weights, "selection.folds": seen},
            warnings=_warnings(folds), fit_summary=None,
            reestimated=any(f.reestimated for f in folds),
            point=tuple(float(v) for v in forecast.mean),
            lower={lv: tuple(float(v) for v in b) for lv, b in forecast.lower.items()},
            upper={lv: tuple(float(v) for v in b) for lv, b in forecast.upper.items()}))
    return tuple(out)


def _selected(spec: CombinationSpec, known: np.ndarray, seed: int,
              fold: int) -> tuple[list[int], float]:
    """Member positions (0-based) used at this origin and the folds the selection saw."""
    everyone = list(range(len(spec.members)))
    if spec.rule != "confidence_set":
        return everyone, 0.0
    rows = known[np.all(np.isfinite(known), axis=1)]
    if len(rows) < MIN_SELECTION_FOLDS:
        return everyone, float(len(rows))
    names = [str(k) for k in everyone]
    try:
        found = model_confidence_set(rows, names, size=SELECTION_SIZE, reps=SELECTION_REPS,
                                     seed=int(np.random.SeedSequence([seed, fold])
                                              .generate_state(1)[0]))
    except (ValueError, IndexError):  # arch fails on members with identical losses
        return everyone, float(len(rows))
    return [int(n) for n in found["included"]] or everyone, float(len(rows))


def _one_step_losses(member_folds: Sequence[Sequence[FoldResult]]) -> np.ndarray:
    """Origins x members: |one-step error| / fold scale; NaN for a failed fold."""
    out = np.full((len(member_folds[0]), len(member_folds)), np.nan)
    for k, folds in enumerate(member_folds):
        for i, f in enumerate(folds):
            if f.status == "ok" and f.scale:
                out[i, k] = abs(f.error(1)) / f.scale
    return out


def _as_forecast(fold: FoldResult) -> Forecast:
    return Forecast(np.asarray(fold.point, float),
                    {lv: np.asarray(b, float) for lv, b in fold.lower.items()},
                    {lv: np.asarray(b, float) for lv, b in fold.upper.items()})


def _warnings(folds: Sequence[FoldResult]) -> tuple[str, ...]:
    seen: dict[str, None] = {}
    for k, f in enumerate(folds, start=1):
        for message in f.warnings:
            seen.setdefault(f"member {k}: {message}", None)
    return tuple(seen)
