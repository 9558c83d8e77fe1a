"""Scores of one candidate over its completed folds, per horizon and pooled.

Per horizon h the measures average over folds; "pooled" (horizon ``None``) averages over
every fold and horizon. Scaled measures divide each fold's errors by that fold's own
training-window scale: MASE by the mean absolute seasonal-naive error, RMSSE by the mean
squared one-step naive error (so pooled RMSSE is ``sqrt(mean(e^2 / scale_sq))``), MSIS by
the MASE scale. Points whose measure is undefined (zero scale; sMAPE's 0/0) are left out
and the score's ``note`` says how many; a score with no defined point is ``None``.

Distribution scores (level ``None``): ``crps`` in the series' units, from the candidate's
predictive distribution (:mod:`backtest.predictive`); ``pinball``, the mean pinball loss
over every quantile the plan's interval bounds give (two per level), also per level; and
``scaled_pinball``, that mean divided by each fold's MASE scale. The M5 competition's
scaled pinball loss divided by the one-step naive scale instead (Makridakis et al. 2022);
the two agree for non-seasonal series.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from backtest import metrics
from backtest.predictive import GAUSSIAN, Predictive, crps_by_fold, pinball_by_level
from backtest.results import FoldResult, Score

POINT_METRICS = ("mase", "rmsse", "smape", "mae", "rmse", "me")
DISTRIBUTION_METRICS = ("crps", "pinball", "scaled_pinball")
LEVEL_METRICS = ("coverage", "winkler", "msis", "pinball")


def score_candidate(candidate_id: str, folds: Sequence[FoldResult], horizon: int,
                    levels: Sequence[int], predictive: Predictive = GAUSSIAN) -> list[Score]:
    """All scores of one candidate; ``folds`` may include failed ones (they are skipped).
    ``predictive`` says what distribution the folds' bounds come from (default: Gaussian
    on the original scale)."""
    done = [f for f in folds if f.status == "ok"]
    columns: list[int | None] = [*range(1, horizon + 1), None]
    if not done:
        return [Score(candidate_id, h, name, level, None, 0, "no fold completed")
                for h in columns for name, level in _names(levels)]
    arrays = _stack(done, levels)
    arrays["crps"], crps_note = crps_by_fold(done, predictive, levels)
    for level, losses in pinball_by_level(done, levels).items():
        arrays[f"pinball{level}"] = losses
    out = []
    for h in columns:
        cols = slice(None) if h is None else slice(h - 1, h)
        out.extend(_point_scores(candidate_id, h, arrays, cols))
        out.extend(_distribution_scores(candidate_id, h, arrays, cols, levels, crps_note))
        for level in levels:
            out.extend(_level_scores(candidate_id, h, arrays, cols, level))
    return out


def _names(levels: Sequence[int]) -> list[tuple[str, int | None]]:
    return ([(m, None) for m in (*POINT_METRICS, *DISTRIBUTION_METRICS)]
            + [(m, lv) for lv in levels for m in LEVEL_METRICS])


def _stack(folds: Sequence[FoldResult], levels: Sequence[int]) -> dict[str, np.ndarray]:
    arrays = {
        "actual": np.array([f.actuals for f in folds], dtype=float),
        "point": np.array([f.point for f in folds], dtype=float),
        "scale": np.array([np.nan if f.scale is None else f.scale for f in folds])[:, None],
        "scale_sq": np.array([np.nan if f.scale_sq is None else f.scale_sq
                              for f in folds])[:, None],
    }
    for level in levels:
        arrays[f"lower{level}"] = np.array([f.lower[level] for f in folds], dtype=float)
        arrays[f"upper{level}"] = np.array([f.upper[level] for f in folds], dtype=float)
    return arrays


def _scaled_mean(values: np.ndarray, scale: np.ndarray) -> tuple[float | None, int, str | None]:
    scale = np.broadcast_to(scale, values.shape)
    ok = np.isfinite(scale) & (scale > 0) & np.isfinite(values)
    left_out = int(values.size - ok.sum())
    if not ok.any():
        return None, 0, "undefined: every training window has a zero (or undefined) scale"
    note = f"{left_out} point(s) with zero training scale left out" if left_out else None
    return float(np.mean(values[ok] / scale[ok])), int(ok.sum()), note


def _point_scores(cid: str, h: int | None, a: dict[str, np.ndarray], cols: slice) -> list[Score]:
    actual, point = a["actual"][:, cols], a["point"][:, cols]
    errors = actual - point
    n = errors.size
    mase, n_mase, note_mase = _scaled_mean(np.abs(errors), a["scale"])
    msse, n_rmsse, note_rmsse = _scaled_mean(errors**2, a["scale_sq"])
    terms = metrics.smape_terms(actual, point)
    defined = np.isfinite(terms)
    smape = float(np.mean(terms[defined])) if defined.any() else None
    smape_note = None
    if not defined.all():
        smape_note = (f"{int((~defined).sum())} point(s) with actual = forecast = 0 left out"
                      if defined.any() else "undefined: every actual and forecast is 0")
    return [
        Score(cid, h, "mase", None, mase, n_mase, note_mase),
        Score(cid, h, "rmsse", None, None if msse is None else float(np.sqrt(msse)), n_rmsse,
              note_rmsse),
        Score(cid, h, "smape", None, smape, int(defined.sum()), smape_note),
        Score(cid, h, "mae", None, float(np.mean(np.abs(errors))), n),
        Score(cid, h, "rmse", None, float(np.sqrt(np.mean(errors**2))), n),
        Score(cid, h, "me", None, float(np.mean(errors)), n),
    ]


def _distribution_scores(cid: str, h: int | None, a: dict[str, np.ndarray], cols: slice,
                         levels: Sequence[int], crps_note: str | None) -> list[Score]:
    crps = a["crps"][:, cols]
    defined = np.isfinite(crps)
    note = None
    if not defined.all():
        note = (f"{int((~defined).sum())} point(s) left out: {crps_note}" if defined.any()
                else crps_note)
    pinball = np.mean([a[f"pinball{level}"][:, cols] for level in levels], axis=0)
    finite = np.isfinite(pinball)
    pinball_note = None if finite.all() else "undefined: an interval bound is infinite"
    scaled, n_scaled, scaled_note = _scaled_mean(pinball, a["scale"])
    if not finite.all():
        scaled, scaled_note = None, pinball_note
    return [
        Score(cid, h, "crps", None, float(np.mean(crps[defined])) if defined.any() else None,
              int(defined.sum()), note),
        Score(cid, h, "pinball", None, float(np.mean(pinball)) if finite.all() else None,
              pinball.size, pinball_note),
        Score(cid, h, "scaled_pinball", None, scaled, n_scaled, scaled_note),
    ]


def _level_scores(cid: str, h: int | None, a: dict[str, np.ndarray], cols: slice,
                  level: int) -> list[Score]:
    actual = a["actual"][:, cols]
    lower, upper = a[f"lower{level}"][:, cols], a[f"upper{level}"][:, cols]
    coverage = float(np.mean(metrics.hits(lower, upper, actual)))
    scores = metrics.interval_score(lower, upper, actual, level)
    finite = np.isfinite(scores)
    winkler = float(np.mean(scores)) if finite.all() else None
    winkler_note = None if finite.all() else "undefined: an interval bound is infinite"
    msis, n_msis, msis_note = _scaled_mean(scores, a["scale"])
    if not finite.all():
        msis, msis_note = None, winkler_note
    pinball = a[f"pinball{level}"][:, cols]
    return [
        Score(cid, h, "coverage", level, coverage, actual.size),
        Score(cid, h, "winkler", level, winkler, actual.size, winkler_note),
        Score(cid, h, "msis", level, msis, n_msis, msis_note),
        Score(cid, h, "pinball", level, float(np.mean(pinball)) if finite.all() else None,
              pinball.size, winkler_note),
    ]
