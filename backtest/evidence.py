"""Model-assessment evidence for one series: diagnostics, calibration, comparisons and the
model confidence set, and the ranking annotations drawn from them.

Conventions (documented choices):

- Comparisons use each fold's errors divided by that fold's MASE scale, so absolute loss
  ranks like MASE and the series' level does not drift the losses across origins.
- ``beats_benchmark``: the Diebold-Mariano test with the Harvey-Leybourne-Newbold
  correction (5 %, two-sided, rejection in the candidate's favour) at the ranking horizon;
  when ranking over all horizons, on the per-origin mean loss over horizons, with H-1
  autocovariance lags for the overlap. Absolute loss for MASE, MAE and sMAPE rankings,
  squared loss for RMSE and RMSSE, absolute loss on each origin's root mean square for
  ``rmsse_fold_mean`` (whose figure is the mean of those roots). For the distribution
  scores (CRPS, pinball, scaled pinball) the loss is the fold's CRPS, or its mean pinball
  loss over the plan's quantiles, divided by the fold's MASE scale.
- The model confidence set (Hansen, Lunde & Nason 2011) uses the same per-origin losses,
  over the origins every candidate completed, at size 0.10 (a 90 % set), 1,000 stationary
  bootstrap replications, seeded with the plan's seed. A candidate whose loss is undefined
  at every origin (every fold failed; a CRPS of simulated intervals) is left out of it;
  candidates with identical losses enter it as one and share its verdict (``tied``).
- ``calibration_zone``: the worst zone over the plan's levels at h = 1, where the
  one-step misses from successive origins do not overlap.
- Candidates that make identical forecasts at every origin are listed in
  ``comparison.identical_forecasts``; the confidence set treats models with identical
  losses as one (they share its verdict).
- Periods a fill policy made up are not actuals: they are left out of calibration and
  comparisons like the periods of a failed fold.
- A run whose only candidate is the benchmark has its scores and calibration; the
  comparisons and the confidence set say there is nothing to compare.
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Mapping, Sequence
from dataclasses import dataclass
from functools import partial
from typing import Any, TypeVar

import numpy as np

from backtest.assessment import (
    calibration_report,
    compare_to_benchmark,
    diebold_mariano,
    model_confidence_set,
    pairwise,
)
from backtest.assessment.comparison import Loss
from backtest.evidence_types import (
    Calibration,
    Comparison,
    ConfidenceSet,
    RankingTests,
    SeriesEvidence,
)
from backtest.plan import Plan
from backtest.predictive import Predictive, crps_by_fold, pinball_by_level
from backtest.results import FoldResult
from backtest.score_registry import loss_of

MCS_SIZE = 0.10
MCS_REPS = 1000
ALPHA = 0.05
NOTHING_TO_COMPARE = "nothing to compare: the benchmark is the only candidate"
T = TypeVar("T")


@dataclass(frozen=True)
class Annotation:
    """What the evidence adds to a candidate's ranking row."""

    in_confidence_set: bool | None
    beats_benchmark: bool | None
    calibration_zone: str | None


def matrices(folds: Sequence[FoldResult], horizon: int, levels: Sequence[int],
             filled: Collection[str] = ()) -> dict[str, np.ndarray]:
    """Folds x horizons arrays in origin order; NaN where a fold failed, and NaN actuals at
    ``filled`` periods (made by a fill policy, never observed)."""
    n = len(folds)
    out = {"actual": np.full((n, horizon), np.nan), "point": np.full((n, horizon), np.nan),
           "scale": np.full(n, np.nan)}
    for level in levels:
        out[f"lower{level}"] = np.full((n, horizon), np.nan)
        out[f"upper{level}"] = np.full((n, horizon), np.nan)
    for i, f in enumerate(sorted(folds, key=lambda f: f.fold)):
        out["actual"][i] = [np.nan if p in filled else a for p, a in zip(f.periods, f.actuals)]
        if f.status == "ok":
            out["point"][i] = f.point
            out["scale"][i] = np.nan if not f.scale else f.scale
            for level in levels:
                out[f"lower{level}"][i] = f.lower[level]
                out[f"upper{level}"][i] = f.upper[level]
    return out


def series_evidence(folds_by_candidate: Mapping[str, Sequence[FoldResult]], benchmark_id: str,
                    plan: Plan, predictive: Mapping[str, Predictive],
                    filled: Collection[str] = ()) -> tuple[SeriesEvidence, dict[str, Annotation]]:
    """Calibration, comparisons and confidence set for one series' candidates;
    ``predictive`` gives each candidate's predictive form (for distribution scores).

    A step that fails (any exception) becomes ``None``, or a section with its ``reason``,
    and ``unavailable`` names it with the reason: a failed statistic never stops the run.
    """
    unavailable: dict[str, str] = {}

    def attempt(step: str, compute: Callable[[], T]) -> T | None:
        try:
            return compute()
        except Exception as exc:  # evidence degrades step by step, never the run
            unavailable[step] = f"{type(exc).__name__}: {exc}"
            return None

    filled = frozenset(filled)
    arrays = {cid: matrices(folds, plan.horizon, plan.levels, filled)
              for cid, folds in folds_by_candidate.items()}
    calibration = {cid: attempt(f"calibration.{cid}", partial(_calibration, a, plan))
                   for cid, a in arrays.items()}
    scaled = {cid: (a["actual"] - a["point"]) / a["scale"][:, None] for cid, a in arrays.items()}
    kind = loss_of(plan.rank_by)
    loss: Loss = "squared" if kind == "squared" else "absolute"
    reduce = "root" if kind == "origin_root" else loss
    ranked = scaled
    if kind == "distribution":
        ranked = {cid: _distribution_losses(folds, predictive[cid], plan)
                  / arrays[cid]["scale"][:, None] for cid, folds in folds_by_candidate.items()}
    per_origin = {cid: _origin_losses(e, plan.rank_horizon, reduce)
                  for cid, e in ranked.items()}
    identical = tuple(tuple(group) for group in identical_forecasts(folds_by_candidate))
    if len(arrays) < 2:
        comparison = Comparison(None, None, identical, NOTHING_TO_COMPARE)
    else:
        comparison = Comparison(
            attempt("comparison.benchmark", lambda: compare_to_benchmark(
                scaled, benchmark_id, alpha=ALPHA, origin_step=plan.step)),
            attempt("comparison.pairwise", lambda: pairwise(
                scaled, alpha=ALPHA, origin_step=plan.step)),
            identical)
    beats = {cid: attempt(f"ranking_tests.{cid}", partial(
                 _beats, per_origin[cid], per_origin[benchmark_id], plan, loss))
             for cid in per_origin if cid != benchmark_id}
    confidence_set = attempt("confidence_set", lambda: _confidence_set(per_origin, plan, loss))
    if confidence_set is None:
        confidence_set = ConfidenceSet(None, unavailable["confidence_set"])
    included = confidence_set.included
    annotations = {
        cid: Annotation(None if included is None else cid in included, beats.get(cid),
                        _h1_zone(calibration[cid]))
        for cid in arrays}
    evidence = SeriesEvidence(calibration, comparison,
                              RankingTests(loss, ALPHA, plan.rank_horizon, beats),
                              confidence_set, unavailable)
    return evidence, annotations


def identical_forecasts(folds_by_candidate: Mapping[str, Sequence[FoldResult]]
                        ) -> list[list[str]]:
    """Groups of candidates whose every fold has the same status, point forecasts and
    bounds: one forecast under several names, which no test can tell apart."""
    groups: dict[tuple[Any, ...], list[str]] = {}
    for cid, folds in folds_by_candidate.items():
        key = tuple((f.fold, f.status, f.point, tuple(sorted(f.lower.items())),
                     tuple(sorted(f.upper.items())))
                    for f in sorted(folds, key=lambda f: f.fold))
        groups.setdefault(key, []).append(cid)
    return [ids for ids in groups.values() if len(ids) > 1]


def _calibration(a: dict[str, np.ndarray], plan: Plan) -> Calibration:
    lower = {lv: a[f"lower{lv}"] for lv in plan.levels}
    upper = {lv: a[f"upper{lv}"] for lv in plan.levels}
    actual = np.where(np.isnan(a["point"]), np.nan, a["actual"])
    return Calibration(tuple(calibration_report(actual, lower, upper, plan.levels,
                                                origin_step=plan.step)))


def _distribution_losses(folds: Sequence[FoldResult], predictive: Predictive,
                         plan: Plan) -> np.ndarray:
    """Folds x horizons CRPS (or mean pinball loss) in origin order; NaN where a fold failed."""
    ordered = sorted(folds, key=lambda f: f.fold)
    out = np.full((len(ordered), plan.horizon), np.nan)
    rows = [i for i, f in enumerate(ordered) if f.status == "ok"]
    if not rows:
        return out
    if plan.rank_by == "crps":
        out[rows] = crps_by_fold(ordered, predictive, plan.levels)[0]
    else:
        done = [ordered[i] for i in rows]
        out[rows] = np.mean(list(pinball_by_level(done, plan.levels).values()), axis=0)
    return out


def _origin_losses(scaled: np.ndarray, rank_horizon: int | None, reduce: str) -> np.ndarray:
    """One pseudo-error per origin whose loss is the ranking loss at that origin: over all
    horizons the root mean square for squared loss and for a per-origin root score
    (``reduce`` "squared" or "root"), else the mean absolute error."""
    if rank_horizon is not None:
        return scaled[:, rank_horizon - 1]
    losses: np.ndarray = (np.sqrt(np.mean(scaled**2, axis=1)) if reduce in ("squared", "root")
                          else np.mean(np.abs(scaled), axis=1))
    return losses


def _beats(candidate: np.ndarray, benchmark: np.ndarray, plan: Plan, loss: Loss) -> bool | None:
    keep = np.isfinite(candidate) & np.isfinite(benchmark)
    if keep.sum() < 3:
        return None
    overlap = -(-(plan.rank_horizon or plan.horizon) // plan.step)
    test = diebold_mariano(candidate[keep], benchmark[keep], overlap, loss)
    if test["p_value"] is None:
        return None
    return bool(test["p_value"] < ALPHA and test["mean_difference"] < 0)


def _h1_zone(calibration: Calibration | None) -> str | None:
    return None if calibration is None else calibration.h1_zone


def _confidence_set(per_origin: Mapping[str, np.ndarray], plan: Plan,
                    loss: str) -> ConfidenceSet:
    names = [n for n in per_origin if np.isfinite(per_origin[n]).any()]
    undefined = tuple(n for n in per_origin if n not in names)
    if len(names) < 2:
        return ConfidenceSet(None, NOTHING_TO_COMPARE, undefined)
    power = 2 if loss == "squared" else 1
    losses = np.column_stack([np.abs(per_origin[n]) ** power for n in names])
    found = model_confidence_set(losses, names, size=MCS_SIZE, reps=MCS_REPS, seed=plan.seed)
    return ConfidenceSet(found, without_loss=undefined)
