"""Model-assessment evidence for one series: diagnostics, calibration, comparisons and the
model confidence set, and the ranking annotations drawn from them.

Conventions (documented choices):

- Comparisons use each fold's errors divided by that fold's MASE scale, so absolute loss
  ranks like MASE and the series' level does not drift the losses across origins.
- ``beats_benchmark``: the Diebold-Mariano test with the Harvey-Leybourne-Newbold
  correction (5 %, two-sided, rejection in the candidate's favour) at the ranking horizon;
  when ranking over all horizons, on the per-origin mean loss over horizons, with H-1
  autocovariance lags for the overlap. Absolute loss for MASE, MAE and sMAPE rankings,
  squared loss for RMSE and RMSSE. For the distribution scores (CRPS, pinball, scaled
  pinball) the loss is the fold's CRPS, or its mean pinball loss over the plan's
  quantiles, divided by the fold's MASE scale.
- The model confidence set (Hansen, Lunde & Nason 2011) uses the same per-origin losses,
  over the origins every candidate completed, at size 0.10 (a 90 % set), 1,000 stationary
  bootstrap replications, seeded with the plan's seed. A candidate whose loss is undefined
  at every origin (every fold failed; a CRPS of simulated intervals) is left out of it;
  candidates with identical losses enter it as one and share its verdict (``tied``).
- ``calibration_zone``: the worst zone over the plan's levels at h = 1, where the
  one-step misses from successive origins do not overlap.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from backtest.assessment import (
    calibration_report,
    compare_to_benchmark,
    diebold_mariano,
    model_confidence_set,
    pairwise,
)
from backtest.plan import Plan
from backtest.predictive import Predictive, crps_by_fold, pinball_by_level
from backtest.results import FoldResult

MCS_SIZE = 0.10
MCS_REPS = 1000
ALPHA = 0.05
_ZONE_ORDER = ("consistent", "suspect", "excessive")
_SQUARED = ("rmse", "rmsse")
_DISTRIBUTION = ("crps", "pinball", "scaled_pinball")


@dataclass(frozen=True)
class Annotation:
    """What the evidence adds to a candidate's ranking row."""

    in_confidence_set: bool | None
    beats_benchmark: bool | None
    calibration_zone: str | None


def matrices(folds: Sequence[FoldResult], horizon: int, levels: Sequence[int]
             ) -> dict[str, np.ndarray]:
    """Folds x horizons arrays in origin order; NaN where a fold failed."""
    n = len(folds)
    out = {"actual": np.full((n, horizon), np.nan), "point": np.full((n, horizon), np.nan),
           "scale": np.full(n, np.nan)}
    for level in levels:
        out[f"lower{level}"] = np.full((n, horizon), np.nan)
        out[f"upper{level}"] = np.full((n, horizon), np.nan)
    for i, f in enumerate(sorted(folds, key=lambda f: f.fold)):
        out["actual"][i] = f.actuals
        if f.status == "ok":
            out["point"][i] = f.point
            out["scale"][i] = np.nan if not f.scale else f.scale
            for level in levels:
                out[f"lower{level}"][i] = f.lower[level]
                out[f"upper{level}"][i] = f.upper[level]
    return out


def series_evidence(folds_by_candidate: Mapping[str, Sequence[FoldResult]], benchmark_id: str,
                    plan: Plan, predictive: Mapping[str, Predictive]
                    ) -> tuple[dict, dict[str, Annotation]]:
    """Calibration, comparisons and confidence set for one series' candidates;
    ``predictive`` gives each candidate's predictive form (for distribution scores)."""
    arrays = {cid: matrices(folds, plan.horizon, plan.levels)
              for cid, folds in folds_by_candidate.items()}
    calibration = {cid: _calibration(a, plan) for cid, a in arrays.items()}
    scaled = {cid: (a["actual"] - a["point"]) / a["scale"][:, None] for cid, a in arrays.items()}
    loss = "squared" if plan.rank_by in _SQUARED else "absolute"
    ranked = scaled
    if plan.rank_by in _DISTRIBUTION:
        ranked = {cid: _distribution_losses(folds, predictive[cid], plan)
                  / arrays[cid]["scale"][:, None] for cid, folds in folds_by_candidate.items()}
    per_origin = {cid: _origin_losses(e, plan.rank_horizon, loss) for cid, e in ranked.items()}
    comparison = {
        "errors": "scaled by each fold's MASE scale",
        "benchmark": compare_to_benchmark(scaled, benchmark_id, alpha=ALPHA,
                                          origin_step=plan.step),
        "pairwise": pairwise(scaled, alpha=ALPHA, origin_step=plan.step),
    }
    beats = {cid: _beats(per_origin[cid], per_origin[benchmark_id], plan, loss)
             for cid in per_origin if cid != benchmark_id}
    confidence_set = _confidence_set(per_origin, plan, loss)
    included = set(confidence_set.get("included", ()))
    annotations = {
        cid: Annotation(cid in included if "included" in confidence_set else None,
                        beats.get(cid), _h1_zone(calibration[cid]))
        for cid in arrays}
    evidence = {"calibration": calibration, "comparison": comparison,
                "ranking_tests": {"loss": loss, "alpha": ALPHA, "horizon": plan.rank_horizon,
                                  "benchmark": {cid: b for cid, b in beats.items()}},
                "confidence_set": confidence_set}
    return evidence, annotations


def _calibration(a: dict[str, np.ndarray], plan: Plan) -> list[dict]:
    lower = {lv: a[f"lower{lv}"] for lv in plan.levels}
    upper = {lv: a[f"upper{lv}"] for lv in plan.levels}
    actual = np.where(np.isnan(a["point"]), np.nan, a["actual"])
    return calibration_report(actual, lower, upper, plan.levels, origin_step=plan.step)


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


def _origin_losses(scaled: np.ndarray, rank_horizon: int | None, loss: str) -> np.ndarray:
    """One pseudo-error per origin whose loss is the ranking loss at that origin."""
    if rank_horizon is not None:
        return scaled[:, rank_horizon - 1]
    if loss == "squared":
        return np.sqrt(np.mean(scaled**2, axis=1))
    return np.mean(np.abs(scaled), axis=1)


def _beats(candidate: np.ndarray, benchmark: np.ndarray, plan: Plan, loss: str) -> bool | None:
    keep = np.isfinite(candidate) & np.isfinite(benchmark)
    if keep.sum() < 3:
        return None
    overlap = -(-(plan.rank_horizon or plan.horizon) // plan.step)
    test = diebold_mariano(candidate[keep], benchmark[keep], overlap, loss)  # type: ignore[arg-type]
    if test["p_value"] is None:
        return None
    return bool(test["p_value"] < ALPHA and test["mean_difference"] < 0)


def _confidence_set(per_origin: Mapping[str, np.ndarray], plan: Plan, loss: str) -> dict:
    names = [n for n in per_origin if np.isfinite(per_origin[n]).any()]
    undefined = [n for n in per_origin if n not in names]
    # candidates with identical losses (a model and the same model with empirical
    # intervals, under a point score) enter the set as one, and share its verdict
    groups: dict[bytes, list[str]] = {}
    for n in names:
        groups.setdefault(np.asarray(per_origin[n], float).tobytes(), []).append(n)
    heads = [members[0] for members in groups.values()]
    if len(heads) < 2:
        return {"reason": "a confidence set needs at least two candidates with different "
                          "losses"}
    power = 2 if loss == "squared" else 1
    losses = np.column_stack([np.abs(per_origin[n]) ** power for n in heads])
    try:
        found = model_confidence_set(losses, heads, size=MCS_SIZE, reps=MCS_REPS,
                                     seed=plan.seed)
    except ValueError as exc:
        return {"reason": str(exc)}
    tied = {members[0]: members[1:] for members in groups.values() if len(members) > 1}
    if tied:
        found = {**found, "tied": tied,
                 "included": [m for n in found["included"] for m in [n, *tied.get(n, [])]],
                 "excluded": [m for n in found["excluded"] for m in [n, *tied.get(n, [])]],
                 "p_values": {m: p for n, p in found["p_values"].items()
                              for m in [n, *tied.get(n, [])]}}
    return {**found, "without_loss": undefined} if undefined else found


def _h1_zone(report: list[dict]) -> str | None:
    zones = [level["by_horizon"][0]["zone"] for level in report if level["by_horizon"]]
    zones = [z for z in zones if z is not None]
    return max(zones, key=_ZONE_ORDER.index) if zones else None
